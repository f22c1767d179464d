// rotorbench fuzz: shared checks for the fuzz targets.
#pragma once

#include <cstdio>
#include <cstdlib>
#include <string>
#include <string_view>

namespace rb::fuzz {

/// Aborts (a finding) unless `message` is one line that starts with `place`.
inline void CheckOneLineError(const std::string& message, std::string_view place) {
  if (message.find('\n') != std::string::npos || message.find('\r') != std::string::npos ||
      message.rfind(place, 0) != 0) {
    std::fprintf(stderr, "bad error message (expected one line starting with '%.*s'): %s\n",
                 static_cast<int>(place.size()), place.data(), message.c_str());
    std::abort();
  }
}

inline void Check(bool ok, const char* what) {
  if (!ok) {
    std::fprintf(stderr, "invariant violated: %s\n", what);
    std::abort();
  }
}

}  // namespace rb::fuzz
