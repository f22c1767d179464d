#include "base/text.h"

#include <cstdio>

namespace rb {

std::string Printable(std::string_view s, std::size_t max_len) {
  std::string out;
  const bool cut = s.size() > max_len;
  if (cut) s = s.substr(0, max_len);
  for (unsigned char c : s) {
    switch (c) {
      case '\n': out += "\\n"; break;
      case '\r': out += "\\r"; break;
      case '\t': out += "\\t"; break;
      default:
        if (c < 0x20 || c == 0x7F) {
          char buf[8];
          std::snprintf(buf, sizeof buf, "\\x%02X", c);
          out += buf;
        } else {
          out += static_cast<char>(c);  // printable ASCII and UTF-8 bytes pass through
        }
    }
  }
  if (cut) out += "...";
  return out;
}

}  // namespace rb
