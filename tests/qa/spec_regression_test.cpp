// Regressions found by fuzzing the spec parser (fuzz/spec_fuzz.cpp).
#include <doctest/doctest.h>

#include "qa/spec.h"
#include "tests/testutil.h"

TEST_CASE("regression (fuzzing): a TOML syntax error quoting a newline stays one line") {
  const std::string text =
      rb::testing::ReadFile(rb::testing::Fixture("fuzz/spec/regression-newline-in-toml-error.toml"));
  auto spec = rb::qa::ParseSpec(text, "lot.toml");
  REQUIRE_FALSE(spec.ok());
  CHECK(spec.status().message().rfind("lot.toml:", 0) == 0);
  CHECK(spec.status().message().find('\n') == std::string::npos);
  // A key with a newline in it (quoted TOML key) is quoted escaped.
  auto key = rb::qa::ParseSpec("rotorbench_spec = 1\n\"kv\\nx\" = 3\n", "lot.toml");
  REQUIRE_FALSE(key.ok());
  CHECK(key.status().message().find('\n') == std::string::npos);
  CHECK(key.status().message().find("kv\\nx") != std::string::npos);
}
