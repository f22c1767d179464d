// Regressions found by fuzzing plain-text instrument maps and lines (fuzz/text_line_fuzz.cpp)
// and the daemon config (fuzz/daemon_config_fuzz.cpp).
#include <doctest/doctest.h>

#include "acquire/daemon.h"
#include "acquire/text_instrument.h"
#include "tests/testutil.h"

TEST_CASE("regression (fuzzing): TOML errors, names, lines and cells stay on one line") {
  const std::string input = rb::testing::ReadFile(
      rb::testing::Fixture("fuzz/text_line/regression-newline-in-toml-error.toml"));
  auto bad = rb::acquire::ParseTextInstrumentMap(input.substr(0, input.find("\n---\n")), "t.toml");
  REQUIRE_FALSE(bad.ok());
  CHECK(bad.status().message().rfind("t.toml:", 0) == 0);
  CHECK(bad.status().message().find('\n') == std::string::npos);

  auto map = rb::acquire::ParseTextInstrumentMap(
      "name = \"tach\\nB\"\n[[field]]\nindex = 1\nquantity = \"speed\"\nunit = \"rpm\"\n", "t.toml");
  REQUIRE(map.ok());
  CHECK(map->name.find('\n') == std::string::npos);
  auto cell = rb::acquire::ParseTextLine(*map, "12\x01" "3", 0.0);
  REQUIRE_FALSE(cell.ok());
  CHECK(cell.status().message().find('\x01') == std::string::npos);
}

TEST_CASE("a text instrument reading 'inf' or 'nan' is refused, not stored") {
  auto map = rb::acquire::ParseTextInstrumentMap(
      "[[field]]\nindex = 1\nquantity = \"current\"\nunit = \"A\"\n", "m.toml");
  REQUIRE(map.ok());
  for (const char* line : {"inf", "-inf", "nan", "1e999"}) {
    CAPTURE(line);
    CHECK_FALSE(rb::acquire::ParseTextLine(*map, line, 0.0).ok());
  }
  auto ok = rb::acquire::ParseTextLine(*map, "0.52", 0.0);
  REQUIRE(ok.ok());
  CHECK((*ok)->current == 0.52);
}

TEST_CASE("regression (fuzzing): a daemon config's unknown protocol is quoted on one line") {
  // Found by fuzz/daemon_config_fuzz.cpp: a protocol name holding a carriage return was
  // quoted raw, splitting the error message.
  const std::string path =
      rb::testing::Fixture("fuzz/daemon_config/regression-control-char-in-protocol.toml");
  auto cfg = rb::acquire::LoadDaemonConfig(path);
  REQUIRE_FALSE(cfg.ok());
  const std::string& m = cfg.status().message();
  CHECK(m.rfind(path + ":", 0) == 0);
  CHECK(m.find("expected rig or text") != std::string::npos);
  CHECK(m.find('\n') == std::string::npos);
  CHECK(m.find('\r') == std::string::npos);
}
