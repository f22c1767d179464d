// Spec files: the fixture parses to the right SI limits; bad specs give one-line errors
// with the line number.
#include "qa/spec.h"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <string>

#include "tests/testutil.h"

using namespace rb::qa;

namespace {

const Limit* Find(const Spec& s, SpecQuantity q) {
  for (const Limit& l : s.limits) {
    if (l.quantity == q) return &l;
  }
  return nullptr;
}

std::string ErrorOf(const std::string& text) {
  rb::Result<Spec> r = ParseSpec(text, "s.toml");
  return r.ok() ? "(parsed)" : r.status().message();
}

}  // namespace

TEST_CASE("the demo spec fixture parses to SI limits in file order") {
  const rb::Result<Spec> s = LoadSpec(rb::testing::Fixture("specs/demo-6v.toml"));
  REQUIRE(s.ok());
  CHECK(s->name == "Demo 6 V motor, incoming inspection");
  CHECK(s->format_version == 1);
  CHECK(s->accept_number == 0);
  REQUIRE(s->limits.size() == 8);
  CHECK(s->limits.front().quantity == SpecQuantity::kKv);  // file order, not key order
  CHECK(s->limits.back().quantity == SpecQuantity::kInertia);

  // Kv 1540 rpm/V ± 5 %: 1463 … 1617 rpm/V; SI rad/(V·s) = rpm/V · 2π/60.
  const Limit* kv = Find(*s, SpecQuantity::kKv);
  REQUIRE(kv);
  CHECK(*kv->lower == doctest::Approx(1463.0 * std::numbers::pi / 30.0));
  CHECK(*kv->upper == doctest::Approx(1617.0 * std::numbers::pi / 30.0));
  CHECK(kv->ToUnit(*kv->upper) == doctest::Approx(1617.0));
  CHECK(kv->tolerance == "± 5 %");
  // R20 1800 mΩ ± 8 % → 1.656 … 1.944 Ω.
  const Limit* r = Find(*s, SpecQuantity::kR20);
  CHECK(*r->lower == doctest::Approx(1.656));
  CHECK(*r->upper == doctest::Approx(1.944));
  // no-load current max 150 mA at the file's 6 V: one-sided.
  const Limit* i0 = Find(*s, SpecQuantity::kNoLoadCurrent);
  CHECK_FALSE(i0->lower);
  CHECK(*i0->upper == doctest::Approx(0.150));
  CHECK(i0->voltage == 6.0);
  CHECK(i0->Label() == "no-load current at 6 V");
  // Inertia 16 g·cm² ± 20 % → 12.8 … 19.2 g·cm² = 1.28e-6 … 1.92e-6 kg·m².
  const Limit* j = Find(*s, SpecQuantity::kInertia);
  CHECK(*j->lower == doctest::Approx(1.28e-6));
  CHECK(*j->upper == doctest::Approx(1.92e-6));
}

TEST_CASE("absolute ± tolerance, unit spellings with a middle dot, and several voltages") {
  const rb::Result<Spec> s = ParseSpec(R"(rotorbench_spec = 1
name = "t"
[kt]
unit = "mN·m/A"
nominal = 6.2
tolerance = 0.3
[[no_load_speed]]
unit = "rpm"
voltage_V = 6
min = 8000
[[no_load_speed]]
unit = "rpm"
voltage_V = 12
min = 17000
)",
                                       "t.toml");
  REQUIRE(s.ok());
  REQUIRE(s->limits.size() == 3);
  CHECK(*s->limits[0].lower == doctest::Approx(5.9e-3));
  CHECK(*s->limits[0].upper == doctest::Approx(6.5e-3));
  CHECK(s->limits[1].voltage == 6.0);
  CHECK(s->limits[2].voltage == 12.0);
  CHECK(s->limits[2].line == 11);
}

TEST_CASE("bad specs: one line naming the file, the line and what was expected") {
  const std::string head = "rotorbench_spec = 1\nname = \"x\"\n";  // lines 1–2
  // Unknown quantity (line 3), with a hint when only the case is wrong.
  CHECK(ErrorOf(head + "[torque_ripple]\nunit = \"mN.m\"\nmax = 1\n")
            .find("s.toml:3: unknown quantity or setting 'torque_ripple'") == 0);
  CHECK(ErrorOf(head + "[Kv]\nunit = \"rpm/V\"\nmax = 1\n").find("did you mean 'kv'?") !=
        std::string::npos);
  // Unknown unit (line 4) lists the accepted ones.
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm\"\nnominal = 1\ntolerance = 1\n") ==
        "s.toml:4: [kv] unit \"rpm\" is not a speed constant unit; expected one of: "
        "rad/(V.s), rpm/V");
  // min > max: the line of min (line 6).
  CHECK(ErrorOf(head + "[r20]\nunit = \"mohm\"\nmax = 1800\nmin = 2200\n")
            .find("s.toml:6: [r20] min 2200 is above max 1800") == 0);
  // Missing voltage for a voltage-dependent quantity: the table's line (3).
  CHECK(ErrorOf(head + "[stall_current]\nunit = \"A\"\nmax = 5\n")
            .find("s.toml:3: [stall_current] depends on the supply voltage") == 0);
  // Voltage where it means nothing.
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\nmax = 2000\nvoltage_V = 6\n")
            .find("s.toml:3: [kv] does not depend on the supply voltage") == 0);
  // TOML syntax error (line 4: unterminated string), from toml++'s source position.
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\nmax = 1\n").find("s.toml:4: ") == 0);
  // Unknown setting inside a quantity (line 5).
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\nmaximum = 1\n")
            .find("s.toml:5: [kv] has no setting 'maximum'") == 0);
  // Both tolerance forms; no limits; ± without nominal; non-numeric value.
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\nnominal = 1\ntolerance = 1\nmax = 3\n")
            .find("s.toml:3: [kv] gives a ± tolerance and min/max") == 0);
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\nnominal = 1\n")
            .find("s.toml:3: [kv] has no limits") == 0);
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\ntolerance_percent = 5\n").find("but no nominal") !=
        std::string::npos);
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\"\nmax = \"high\"\n")
            .find("s.toml:5: [kv] max must be a number") == 0);
  CHECK(ErrorOf(head + "[kv]\nmax = 1\n").find("s.toml:3: [kv] has no unit") == 0);
  // Versioning: missing, newer.
  CHECK(ErrorOf("name = \"x\"\n[kv]\nunit = \"rpm/V\"\nmax = 1\n")
            .find("s.toml:1: no format version; expected rotorbench_spec = 1") == 0);
  CHECK(ErrorOf("rotorbench_spec = 2\nname = \"x\"\n").find("s.toml:1: spec format 2 is newer") ==
        0);
  // Nothing to check.
  CHECK(ErrorOf(head).find("no quantities") != std::string::npos);
  // Errors are one line.
  CHECK(ErrorOf(head + "[kv]\nunit = \"rpm/V\nmax = 1\n").find('\n') == std::string::npos);
}

TEST_CASE("a missing spec file is NotFound naming the path") {
  const rb::Result<Spec> s = LoadSpec("/nonexistent/spec.toml");
  REQUIRE_FALSE(s.ok());
  CHECK(s.status().code() == rb::Code::kNotFound);
  CHECK(s.status().message().find("/nonexistent/spec.toml") == 0);
}
