// rotorbench base: user text made safe to quote inside a one-line message.
// Thread-safe.
#pragma once

#include <string>
#include <string_view>

namespace rb {

/// `s` with control characters and bytes ≥ 0x7F (outside valid-looking UTF-8 runs) escaped
/// (\n, \r, \t, \xNN), cut to `max_len` bytes with "..." appended when longer. The result
/// never contains a newline, so an error message that quotes input stays one line.
std::string Printable(std::string_view s, std::size_t max_len = 60);

}  // namespace rb
