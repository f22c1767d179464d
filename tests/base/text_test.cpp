// Quoting user text inside one-line messages.
#include <doctest/doctest.h>

#include "base/text.h"

TEST_CASE("Printable escapes control characters and cuts long text") {
  CHECK(rb::Printable("plain") == "plain");
  CHECK(rb::Printable("a\nb\r\tc") == "a\\nb\\r\\tc");
  CHECK(rb::Printable(std::string("x\0y", 3)) == "x\\x00y");
  CHECK(rb::Printable("°C µs") == "°C µs");  // UTF-8 passes through
  CHECK(rb::Printable(std::string(100, 'a'), 10) == "aaaaaaaaaa...");
}
