// Fuzz target: plain-text instruments. The input is an instrument map (TOML) and, after a
// line "---", the instrument's byte stream. A bad map is refused with a one-line message
// naming it; every line either yields a sample with finite values, is not ours, or is
// refused with a one-line message.
#include <cmath>
#include <cstdint>
#include <string>
#include <string_view>

#include "acquire/text_instrument.h"
#include "fuzz/fuzz_util.h"

using rb::fuzz::Check;
using rb::fuzz::CheckOneLineError;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view all(reinterpret_cast<const char*>(data), size);
  const std::size_t cut = all.find("\n---\n");
  const std::string map_text(all.substr(0, cut));
  const std::string_view stream = cut == std::string_view::npos ? "" : all.substr(cut + 5);
  auto map = rb::acquire::ParseTextInstrumentMap(map_text, "fuzz.toml");
  if (!map.ok()) {
    CheckOneLineError(map.status().message(), "fuzz.toml");
    return 0;
  }
  rb::acquire::LineSplitter splitter;
  std::vector<std::string> lines;
  splitter.Feed(stream, &lines);
  for (const std::string& line : lines) {
    Check(line.find('\n') == std::string::npos, "a split line holds no newline");
    auto s = rb::acquire::ParseTextLine(*map, line, 1.0);
    if (!s.ok()) {
      CheckOneLineError(s.status().message(), map->name);
      continue;
    }
    if (!s->has_value()) continue;
    for (double v : {(*s)->speed, (*s)->current, (*s)->voltage}) {
      Check(std::isnan(v) || std::isfinite(v), "values are finite or absent");
    }
  }
  return 0;
}
