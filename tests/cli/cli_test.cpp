// End to end through the real binary: the command forms other tools rely on, and the
// promise that bad input leaves a one-line error, a non-zero exit and an unchanged database.
#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include <algorithm>

#include "tests/testutil.h"

using rb::testing::CommandResult;
using rb::testing::RunRotorbench;
using rb::testing::TempDir;
using rb::testing::WriteFile;
using nlohmann::json;

namespace {

const char* kGoodCsv =
    "time_s,speed_rpm,current_a,voltage_v\n"
    "0,,0.012,0\n"
    "0.0005,,2.91,5.62\n"
    "0.0021,612.5,,\n"
    "0.001,,2.5,5.71\n";  // not increasing: only used in the bad-input table

std::string GoodCsv() {
  return "time_s,speed_rpm,current_a,voltage_v\n"
         "0,,0.012,0\n"
         "0.0005,,2.91,5.62\n"
         "0.001,,2.5,5.71\n"
         "0.0021,612.5,,\n"
         "0.0035,1234.25,1.75,5.8\n";
}

/// Everything a user can see in the database, as text.
std::string Snapshot(const std::string& db) {
  CommandResult m = RunRotorbench({"--db", db, "motor", "list", "--json"});
  CommandResult r = RunRotorbench({"--db", db, "run", "list", "--json"});
  return m.out + r.out;
}

int Lines(const std::string& s) { return static_cast<int>(std::count(s.begin(), s.end(), '\n')); }

}  // namespace

TEST_CASE("motor add / list / show, import, run list / show, export round trip") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  CommandResult r = RunRotorbench({"--db", db, "motor", "add", "M-001", "--batch", "lot-A",
                                   "--note", "salvaged from a toy car"});
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("added motor 'M-001'") != std::string::npos);

  r = RunRotorbench({"--db", db, "motor", "list", "--json"});
  REQUIRE(r.exit_code == 0);
  json motors = json::parse(r.out);
  REQUIRE(motors.size() == 1);
  CHECK(motors[0]["label"] == "M-001");
  CHECK(motors[0]["batch"] == "lot-A");

  const std::string csv = dir.File("spin.csv");
  WriteFile(csv, GoodCsv());
  r = RunRotorbench({"--db", db, "import", csv, "--motor", "M-001", "--kind", "spinup"});
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("imported 5 samples") != std::string::npos);

  r = RunRotorbench({"--db", db, "run", "list", "--motor", "M-001", "--json"});
  REQUIRE(r.exit_code == 0);
  json runs = json::parse(r.out);
  REQUIRE(runs.size() == 1);
  CHECK(runs[0]["kind"] == "spinup");
  CHECK(runs[0]["status"] == "complete");
  CHECK(runs[0]["samples"] == 5);
  const std::string id = std::to_string(runs[0]["id"].get<int>());

  r = RunRotorbench({"--db", db, "run", "show", id, "--json"});
  REQUIRE(r.exit_code == 0);
  json show = json::parse(r.out);
  CHECK(show["channels"]["speed_rpm"]["readings"] == 2);
  CHECK(show["channels"]["current_A"]["max"] == 2.91);

  r = RunRotorbench({"--db", db, "export", "--run", id, "--format", "csv"});
  REQUIRE(r.exit_code == 0);
  CHECK(r.out == GoodCsv());  // every value reproduced

  r = RunRotorbench({"--db", db, "export", "--run", id, "--format", "json"});
  REQUIRE(r.exit_code == 0);
  json ex = json::parse(r.out);
  CHECK(ex["samples"]["speed_rpm"][4] == 1234.25);
  CHECK(ex["samples"]["speed_rpm"][0].is_null());

  r = RunRotorbench({"--db", db, "motor", "show", "M-001", "--json"});
  REQUIRE(r.exit_code == 0);
  CHECK(json::parse(r.out)["runs"].size() == 1);

  // Human tables print too.
  CHECK(RunRotorbench({"--db", db, "run", "list"}).exit_code == 0);
  CHECK(RunRotorbench({"--db", db, "run", "show", id}).exit_code == 0);
  CHECK(RunRotorbench({"--db", db, "motor", "show", "M-001"}).exit_code == 0);
}

TEST_CASE("bad input: one-line error naming the place, exit != 0, database unchanged") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M1"}).exit_code == 0);
  const std::string good = dir.File("good.csv");
  WriteFile(good, GoodCsv());
  REQUIRE(RunRotorbench({"--db", db, "import", good, "--motor", "M1", "--kind", "spinup"})
              .exit_code == 0);
  const std::string before = Snapshot(db);

  struct Case {
    const char* name;
    std::string content;
    std::vector<std::string> extra;
    std::string expect;  // the message must contain this
  };
  const std::vector<Case> cases = {
      {"missing_time.csv", "speed_rpm,current_a\n1,2\n", {}, "missing_time.csv:1: no time column"},
      {"text.csv", "time_s,current_a\n0,1\n0.1,abc\n", {},
       "text.csv:3: column 'current_a': 'abc' is not a number"},
      {"order.csv", kGoodCsv, {}, "order.csv:5: time 0.001 s is not after 0.0021 s on line 4"},
      {"nan.csv", "time_s,current_a\n0,1\n0.1,NaN\n", {},
       "nan.csv:3: column 'current_a': 'NaN' is not a finite number"},
      {"inf.csv", "time_s,voltage_v\n0,1\n0.1,-inf\n", {},
       "inf.csv:3: column 'voltage_v': '-inf' is not a finite number"},
      {"empty.csv", "", {}, "empty.csv: empty file"},
      {"unit.csv", GoodCsv(), {"--current-unit", "uA"},
       "--current-unit uA: unknown current unit; expected A, mA"},
      {"motor.csv", GoodCsv(), {"--motor", "NOPE"}, "motor 'NOPE' not found"},
      {"kind.csv", GoodCsv(), {"--kind", "sprint"}, "--kind sprint: unknown run kind"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.name);
    const std::string path = dir.File(c.name);
    WriteFile(path, c.content);
    std::vector<std::string> args = {"--db", db, "import", path};
    const bool has_motor = std::find(c.extra.begin(), c.extra.end(), "--motor") != c.extra.end();
    const bool has_kind = std::find(c.extra.begin(), c.extra.end(), "--kind") != c.extra.end();
    if (!has_motor) args.insert(args.end(), {"--motor", "M1"});
    if (!has_kind) args.insert(args.end(), {"--kind", "spinup"});
    args.insert(args.end(), c.extra.begin(), c.extra.end());
    CommandResult r = RunRotorbench(args);
    CHECK(r.exit_code != 0);
    CHECK(Lines(r.err) == 1);
    CHECK(r.err.rfind("rotorbench: error: ", 0) == 0);
    CHECK(r.err.find(c.expect) != std::string::npos);
    CHECK(Snapshot(db) == before);
  }

  // A file that is not a rotorbench database, as --db: refused, and left as it was.
  const std::string notdb = dir.File("notes.txt");
  WriteFile(notdb, "shopping list: brushes, 0.25 mm wire, flux\n");
  CommandResult r = RunRotorbench({"--db", notdb, "import", good, "--motor", "M1", "--kind",
                                   "spinup"});
  CHECK(r.exit_code != 0);
  CHECK(Lines(r.err) == 1);
  CHECK(r.err.find(notdb + ": not a rotorbench database") != std::string::npos);
  CHECK(rb::testing::ReadFile(notdb) == "shopping list: brushes, 0.25 mm wire, flux\n");
  // Reading commands never create a database.
  r = RunRotorbench({"--db", dir.File("absent.db"), "run", "list"});
  CHECK(r.exit_code != 0);
  CHECK(r.err.find("absent.db: no such database") != std::string::npos);
}

TEST_CASE("--help and --version work on every command, $ROTORBENCH_DB sets the default") {
  for (const auto& args : std::vector<std::vector<std::string>>{
           {"--help"}, {"motor", "--help"}, {"motor", "add", "--help"}, {"import", "--help"},
           {"run", "list", "--help"}, {"export", "--help"}, {"simulate", "--help"}}) {
    CommandResult r = RunRotorbench(args);
    CHECK(r.exit_code == 0);
    CHECK(r.out.find("Usage") != std::string::npos);
  }
  for (const auto& args : std::vector<std::vector<std::string>>{
           {"--version"}, {"motor", "--version"}, {"run", "list", "--version"}}) {
    CommandResult r = RunRotorbench(args);
    CHECK(r.exit_code == 0);
    CHECK(r.out.rfind("rotorbench ", 0) == 0);
  }
  TempDir dir;
  const std::string db = dir.File("env.db");
  CommandResult r = rb::testing::RunProgram(
      {"env", "ROTORBENCH_DB=" + db, ROTORBENCH_BIN, "motor", "add", "E1"});
  REQUIRE(r.exit_code == 0);
  r = RunRotorbench({"--db", db, "motor", "list", "--json"});
  CHECK(json::parse(r.out)[0]["label"] == "E1");
  // An unknown option is a usage error with a one-line message.
  r = RunRotorbench({"motor", "list", "--bogus"});
  CHECK(r.exit_code == 2);
  CHECK(r.err.rfind("rotorbench: error: ", 0) == 0);
}

TEST_CASE("simulate writes a CSV that imports as a run") {
  TempDir dir;
  const std::string db = dir.File("sim.db");
  const std::string csv = dir.File("sim.csv");
  REQUIRE(RunRotorbench({"simulate", "--kind", "spinup", "--volts", "6", "--out", csv, "--seed",
                         "3"}).exit_code == 0);
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "demo"}).exit_code == 0);
  CommandResult r = RunRotorbench({"--db", db, "import", csv, "--motor", "demo", "--kind",
                                   "spinup", "--supply-volts", "6"});
  REQUIRE(r.exit_code == 0);
  r = RunRotorbench({"--db", db, "run", "list", "--json"});
  json runs = json::parse(r.out);
  REQUIRE(runs.size() == 1);
  CHECK(runs[0]["samples"].get<int>() > 1000);
  CHECK(runs[0]["nominal_voltage_V"] == 6.0);
}
