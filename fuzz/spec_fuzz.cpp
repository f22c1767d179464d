// Fuzz target: QA acceptance specs (TOML). Either a spec whose limits make sense, or a
// one-line error naming the file (and line).
#include <cmath>
#include <cstdint>
#include <string_view>

#include "fuzz/fuzz_util.h"
#include "qa/spec.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  auto spec = rb::qa::ParseSpec(text, "fuzz.toml");
  if (!spec.ok()) rb::fuzz::CheckOneLineError(spec.status().message(), "fuzz.toml");
  return 0;
}
