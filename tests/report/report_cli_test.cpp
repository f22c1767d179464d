// `rotorbench report` and `rotorbench curves` end to end: a database with simulated runs
// and a stored fit (the simulator's true motor with 1 % uncertainties), the real binary.
#include <doctest/doctest.h>

#include <filesystem>
#include <nlohmann/json.hpp>

#include "tests/report/report_fixture.h"
#include "tests/testutil.h"

using namespace rb;
using rb::testing::CommandResult;
using rb::testing::RunRotorbench;
using rb::testing::TempDir;

namespace {

/// A database with motor "demo-07": a locked, a spin-up and a coast-down run (6 V) and one
/// stored fit; returns the fit id.
std::int64_t MakeBench(const std::string& path) {
  Result<storage::Database> db = storage::Database::Open(path);
  REQUIRE(db.ok());
  REQUIRE(db->AddMotor("demo-07", "lot-2031", "").ok());
  REQUIRE(db->AddMotor("no-fit", "", "").ok());
  const report::ReportInput in =
      rb::testing::SimulatedReportInput({{model::RunKind::kLocked, 2.0, 0.2},
                                         {model::RunKind::kSpinUp, 6.0, 0.6},
                                         {model::RunKind::kCoastDown, 6.0, 20}},
                                        false);
  fit::FitSummary s = in.fits[0].summary;
  s.runs.clear();
  for (const report::ReportRun& r : in.runs) {
    storage::NewRun nr;
    nr.motor_id = 1;
    nr.kind = r.record.kind;
    nr.started_utc = r.record.started_utc;
    nr.source = "sim";
    nr.nominal_voltage = r.record.nominal_voltage;
    nr.meta_json = r.record.meta_json;
    Result<std::int64_t> id = db->ImportRun(nr, r.samples);
    REQUIRE(id.ok());
    fit::RunFit rf;
    rf.run_id = *id;
    rf.kind = r.record.kind;
    rf.nominal_voltage = *r.record.nominal_voltage;
    s.runs.push_back(rf);
  }
  Result<std::int64_t> fit_id = fit::StoreFit(*db, s);
  REQUIRE(fit_id.ok());
  return *fit_id;
}

}  // namespace

TEST_CASE("rotorbench report --motor LABEL [--fit ID] [--voltage V] --out FILE.html") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  const std::int64_t fit_id = MakeBench(db);
  const std::string out = dir.File("demo-07.html");
  CommandResult r = RunRotorbench({"--db", db, "report", "--motor", "demo-07", "--out", out});
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("wrote report of motor demo-07") != std::string::npos);
  CHECK(r.out.find("characteristics at 6 V") != std::string::npos);  // the runs' highest supply
  const std::string html = rb::testing::ReadFile(out);
  CHECK(html.find("<h1>Motor demo-07</h1>") != std::string::npos);
  CHECK(html.find("id=\"curve-efficiency\"") != std::string::npos);
  CHECK(html.find("id=\"run-2\"") != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(out + ".tmp"));

  r = RunRotorbench({"--db", db, "report", "--motor", "demo-07", "--fit", std::to_string(fit_id),
                     "--voltage", "4.5", "--out", out});
  REQUIRE(r.exit_code == 0);
  CHECK(rb::testing::ReadFile(out).find("Characteristics at 4.5 V") != std::string::npos);
}

TEST_CASE("report: bad requests give a one-line error, a non-zero exit and no file") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  MakeBench(db);
  const std::string out = dir.File("x.html");
  struct Case {
    std::vector<std::string> args;
    const char* expect;
  };
  const Case cases[] = {
      {{"--motor", "nope"}, "--motor nope"},
      {{"--motor", "no-fit"}, "has no fit yet"},
      {{"--motor", "demo-07", "--fit", "99"}, "--fit 99: no such fit of motor demo-07"},
      {{"--motor", "demo-07", "--voltage", "-3"}, "--voltage -3: expected a supply voltage > 0"},
  };
  for (const Case& c : cases) {
    std::vector<std::string> args = {"--db", db, "report"};
    args.insert(args.end(), c.args.begin(), c.args.end());
    args.insert(args.end(), {"--out", out});
    CommandResult r = RunRotorbench(args);
    CAPTURE(c.expect);
    CHECK(r.exit_code == 1);
    CHECK(r.err.find(c.expect) != std::string::npos);
    CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
    CHECK_FALSE(std::filesystem::exists(out));
  }
  CommandResult r =
      RunRotorbench({"--db", dir.File("missing.db"), "report", "--motor", "demo-07", "--out", out});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("missing.db") != std::string::npos);
}

TEST_CASE(
    "rotorbench curves --fit ID [--voltage V] [--json]: the model's figures with their "
    "delta-method uncertainty, and the curve") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  const std::int64_t fit_id = MakeBench(db);
  CommandResult r = RunRotorbench({"--db", db, "curves", "--fit", std::to_string(fit_id),
                                   "--voltage", "6", "--points", "5", "--json"});
  REQUIRE(r.exit_code == 0);
  const nlohmann::json j = nlohmann::json::parse(r.out);
  const model::MotorEstimate e = rb::testing::SummaryOf(model::DemoMotor(), 0.01, "x").Estimate();
  const model::CharacteristicsU cu = model::ComputeCharacteristicsU(e, 6.0);
  CHECK(j["voltage_V"] == 6.0);
  CHECK(j["figures"]["no_load_speed_rad_s"]["value"].get<double>() ==
        doctest::Approx(cu.Get(model::kNoLoadSpeed).value).epsilon(1e-12));
  CHECK(j["figures"]["no_load_speed_rad_s"]["u"].get<double>() ==
        doctest::Approx(cu.Get(model::kNoLoadSpeed).u).epsilon(1e-9));
  CHECK(j["figures"]["max_efficiency"]["value"].get<double>() ==
        doctest::Approx(cu.Get(model::kMaxEfficiency).value).epsilon(1e-12));
  REQUIRE(j["curve"].size() == 5);
  CHECK(j["curve"][0]["torque_N_m"] == 0.0);
  CHECK(j["curve"][4]["speed_rad_s"].get<double>() == doctest::Approx(0.0).epsilon(1e-9));

  r = RunRotorbench({"--db", db, "curves", "--fit", std::to_string(fit_id)});
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("characteristics at 6 V") != std::string::npos);
  CHECK(r.out.find("no-load speed") != std::string::npos);
  CHECK(r.out.find("rpm") != std::string::npos);

  r = RunRotorbench({"--db", db, "curves", "--fit", "42"});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("--fit 42") != std::string::npos);
}
