// Fuzz target: CSV sample import. Any byte string must either parse into samples that keep
// the import's promises (finite values, strictly increasing time) or be refused with a
// one-line message naming the file — never crash, hang or produce a wrong value.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "acquire/csv_import.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  rb::acquire::CsvImportOptions options;
  if (size > 0 && data[0] == ';') options.delimiter = ';';  // reach the other delimiter too
  auto r = rb::acquire::ParseSamplesCsv(text, "fuzz.csv", options);
  if (!r.ok()) {
    const std::string& m = r.status().message();
    if (m.rfind("fuzz.csv", 0) != 0 || m.find('\n') != std::string::npos) std::abort();
    return 0;
  }
  double prev = -INFINITY;
  for (const auto& s : r->samples) {
    if (!std::isfinite(s.t) || !(s.t > prev)) std::abort();
    for (double v : {s.speed, s.current, s.voltage}) {
      if (!std::isnan(v) && !std::isfinite(v)) std::abort();
    }
    prev = s.t;
  }
  return 0;
}
