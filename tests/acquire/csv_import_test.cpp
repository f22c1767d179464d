// CSV import: defaults, mapped columns and units, and every kind of bad input.
#include <doctest/doctest.h>

#include <cmath>

#include "acquire/csv_import.h"
#include "model/units.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::acquire;

namespace {
Result<CsvImportSummary> Parse(const std::string& text, const CsvImportOptions& o = {}) {
  return ParseSamplesCsv(text, "run.csv", o);
}
std::string Err(const std::string& text, const CsvImportOptions& o = {}) {
  auto r = Parse(text, o);
  return r.ok() ? "(ok)" : r.status().message();
}
}  // namespace

TEST_CASE("default header, empty cells mean no reading, values become SI") {
  auto r = Parse("time_s,speed_rpm,current_a,voltage_v\n0,,0.5,6\n0.001,600,,\n0.002,,0.52,5.9\n");
  REQUIRE(r.ok());
  REQUIRE(r->samples.size() == 3);
  CHECK(r->samples[0].t == 0);
  CHECK(std::isnan(r->samples[0].speed));
  CHECK(r->samples[0].current == 0.5);
  CHECK(r->samples[1].speed == doctest::Approx(600 * 2 * 3.141592653589793 / 60));
  CHECK(std::isnan(r->samples[1].voltage));
  CHECK(r->speed_readings == 1);
  CHECK(r->current_readings == 2);
  CHECK(r->voltage_readings == 2);
}

TEST_CASE("any subset of channels but time, CRLF, BOM, spaces and quotes are fine") {
  auto r = Parse("\xEF\xBB\xBFtime_s, current_a\r\n0.0, 1.5\r\n\r\n\"0.1\",\"1.25\"\r\n");
  REQUIRE(r.ok());
  CHECK(r->samples.size() == 2);
  CHECK(r->samples[1].current == 1.25);
  CHECK(r->speed.header.empty());
}

TEST_CASE("unit-suffixed headers are recognised") {
  auto r = Parse("time_ms,speed_rad_s,current_ma,voltage_mv\n10,100,250,6000\n");
  REQUIRE(r.ok());
  CHECK(r->samples[0].t == doctest::Approx(0.01));
  CHECK(r->samples[0].speed == 100);
  CHECK(r->samples[0].current == doctest::Approx(0.25));
  CHECK(r->samples[0].voltage == doctest::Approx(6.0));
}

TEST_CASE("options map other headers and units") {
  CsvImportOptions o;
  o.time = {"Stamp", "ms"};
  o.speed = {"Tach", "rpm"};
  o.current = {"I", "mA"};
  o.delimiter = ';';
  auto r = Parse("Stamp;Tach;I;note\n0;0;100;x\n5;1200;900;y\n", o);
  REQUIRE(r.ok());
  CHECK(r->samples[1].t == doctest::Approx(0.005));
  CHECK(r->samples[1].current == doctest::Approx(0.9));
  CHECK(r->time.header == "Stamp");
  CHECK(r->current.unit == "mA");
}

TEST_CASE("bad input: each error names file:line and what was expected") {
  CHECK(Err("") ==
        "run.csv: empty file; expected a header line such as time_s,speed_rpm,current_a,voltage_v");
  CHECK(Err("speed_rpm,current_a\n1,2\n") ==
        "run.csv:1: no time column (looked for time_s, time_ms, time_us); expected one, or name "
        "it with --time-col; the header has: speed_rpm, current_a");
  CHECK(Err("time_s,foo\n1,2\n").find("run.csv:1: no speed, current or voltage column") == 0);
  CHECK(Err("time_s,current_a\n0,1\n0.1,abc\n") ==
        "run.csv:3: column 'current_a': 'abc' is not a number; expected a decimal number or an "
        "empty cell");
  CHECK(Err("time_s,current_a\n0,1\n0.1,nan\n") ==
        "run.csv:3: column 'current_a': 'nan' is not a finite number; expected a decimal number "
        "or an empty cell");
  CHECK(Err("time_s,current_a\n0,1\n0.1,inf\n").find("run.csv:3:") == 0);
  CHECK(Err("time_s,current_a\n0,1\n0.2,1\n0.1,1\n") ==
        "run.csv:4: time 0.1 s is not after 0.2 s on line 3; expected strictly increasing time");
  CHECK(Err("time_s,current_a\n0,1\n0,1\n").find("run.csv:3: time 0 s is not after 0 s") == 0);
  CHECK(Err("time_s,current_a\n0,1\n0.1\n") ==
        "run.csv:3: 1 fields; expected 2 as in the header");
  CHECK(Err("time_s,current_a\n,1\n") ==
        "run.csv:2: column 'time_s' is empty; expected a time on every row");
  CHECK(Err("time_s,current_a\n").find("run.csv:1: no readings after the header") == 0);
  CHECK(Err("time_s,current_a\n0,\"1\n").find("run.csv:2: malformed CSV") == 0);
  CHECK(Err("time_s,time_s,current_a\n").find("run.csv:1: column 'time_s' appears twice") == 0);
  CsvImportOptions o;
  o.current = {"", "uA"};
  CHECK(Err("time_s,current_a\n0,1\n", o) ==
        "--current-unit uA: unknown current unit; expected A, mA");
  o = {};
  o.speed = {"Tach", ""};
  CHECK(Err("time_s,current_a\n0,1\n", o) ==
        "run.csv:1: no column 'Tach' (given by --speed-col); the header has: time_s, current_a");
  CHECK(Err(std::string("time_s,current_a\n0,1\0\n", 22)).find("run.csv:2: a NUL byte") == 0);
}

TEST_CASE("export text re-imports to the same values") {
  const std::string in =
      "time_s,speed_rpm,current_a,voltage_v\n"
      "0,,0.503,6.015\n"
      "0.0005,1234.5,,\n"
      "0.001,,0.498,\n"
      "12.345678,9876.54321,2.5,11.995\n";
  auto a = Parse(in);
  REQUIRE(a.ok());
  const std::string out = SamplesToCsv(a->samples);
  CHECK(out == in);  // typical instrument values reproduce exactly, digit for digit
  auto b = Parse(out);
  REQUIRE(b.ok());
  REQUIRE(b->samples.size() == a->samples.size());
}

TEST_CASE("regression (found by fuzzing): a quoted header spanning lines still gives a "
          "one-line error") {
  const std::string input = rb::testing::ReadFile(
      rb::testing::Fixture("fuzz/csv/regression-newline-in-header.csv"));
  auto r = Parse(input);
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().message().rfind("run.csv:", 0) == 0);
  CHECK(r.status().message().find('\n') == std::string::npos);
  CHECK(Err("time_s,current_a\n0,1\n0.1,\"a\nb\"\n").find("'a\\nb' is not a number") !=
        std::string::npos);
}
