// End to end through the real binary: the relied-upon `rewind plan` form, show, suggest,
// verify against stored fits, the fan-load run, and one-line errors for bad input.
#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include <cmath>

#include "fit/fit.h"
#include "model/demo.h"
#include "model/simulate.h"
#include "model/units.h"
#include "rewind/rewind.h"
#include "storage/storage.h"
#include "tests/testutil.h"

using namespace rb;
using nlohmann::json;
using rb::testing::CommandResult;
using rb::testing::RunRotorbench;
using rb::testing::TempDir;

namespace {

fit::FitSummary FitOf(const std::string& motor, const model::MotorParams& p) {
  fit::FitSummary s;
  s.motor = motor;
  const double rel[model::kNumParams] = {0.01, 0, 0.005, 0.03, 0.05, 0.1, 0.1};
  for (int i = 0; i < model::kNumParams; ++i) {
    fit::ParamResult& r = s.params[static_cast<size_t>(i)];
    r.value = model::Get(p, i);
    r.fitted = rel[i] > 0;
    r.u_combined = r.stderr_stat = rel[i] * std::fabs(r.value);
    s.covariance(i, i) = s.covariance_stat(i, i) = r.u_combined * r.u_combined;
  }
  fit::RunFit run;
  run.run_id = 1;
  run.nominal_voltage = 6.0;
  s.runs.push_back(run);
  return s;
}

/// A database with motor M-1 (fit 1 = demo motor) and M-1R (the rewound motor, no fit yet).
std::string MakeDb(const TempDir& dir) {
  const std::string path = dir.File("bench.db");
  storage::Database db = storage::Database::Open(path).value();
  REQUIRE(db.AddMotor("M-1", "lot-A", "").ok());
  REQUIRE(db.AddMotor("M-1R", "lot-A", "rewound").ok());
  // Run 1: a spin-up of M-1 at 6 V, the run the stored fit refers to.
  model::RunScript script;
  script.duration_s = 0.2;
  const model::SimulatedRun spin = *model::SimulateRun(model::DemoBench(1), script);
  storage::NewRun nr;
  nr.motor_id = db.FindMotor("M-1")->id;
  nr.kind = model::RunKind::kSpinUp;
  nr.started_utc = "2024-01-01T00:00:00Z";
  nr.source = "sim";
  nr.nominal_voltage = 6.0;
  REQUIRE(db.ImportRun(nr, spin.samples).ok());
  REQUIRE(fit::StoreFit(db, FitOf("M-1", model::DemoMotor())).ok());
  return path;
}

json Json(const CommandResult& r) {
  REQUIRE_MESSAGE(r.exit_code == 0, r.err);
  return json::parse(r.out);
}

}  // namespace

TEST_CASE("rewind plan --from-fit ID --old 60xAWG30 --new 36xAWG27 --json (relied upon)") {
  TempDir dir;
  const std::string db = MakeDb(dir);
  const json j = Json(RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old",
                                     "60xAWG30", "--new", "36xAWG27", "--json"}));
  const model::MotorParams demo = model::DemoMotor();
  CHECK(j["baseline"]["R_ohm"].get<double>() == doctest::Approx(demo.R));
  CHECK(j["baseline"]["Kv_rpm_per_V"].get<double>() ==
        doctest::Approx(units::KeToKvRpmPerVolt(demo.Ke)));
  // Ke ∝ turns (domain.md §3.1).
  CHECK(j["predicted"]["Ke_V_s_per_rad"].get<double>() == doctest::Approx(demo.Ke * 36 / 60));
  CHECK(j["predicted"]["Kt_N_m_per_A"].get<double>() == doctest::Approx(demo.Ke * 36 / 60));
  CHECK(j["fill"]["verdict"].is_string());
  CHECK(j["voltage_V"].get<double>() == doctest::Approx(6.0));  // from the fitted runs
  CHECK(j["plan_id"].get<int>() == 1);
  // Stored: show gives the same prediction; --from-motor takes the latest fit.
  const json s = Json(RunRotorbench({"--db", db, "rewind", "show", "--plan", "1", "--json"}));
  CHECK(s["predicted"]["R_ohm"] == j["predicted"]["R_ohm"]);
  const json m = Json(RunRotorbench({"--db", db, "rewind", "plan", "--from-motor", "M-1", "--old",
                                     "60xAWG30", "--new", "48x0.35mm",
                                     "--voltage", "7.4", "--json"}));
  CHECK(m["plan_id"].get<int>() == 2);
  CHECK(m["voltage_V"].get<double>() == doctest::Approx(7.4));
  // Text form: side by side in trade units, the fill verdict and the cautions.
  CommandResult t = RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old",
                                   "60xAWG30", "--new", "36xAWG27"});
  REQUIRE(t.exit_code == 0);
  for (const char* want : {"Kv [rpm/V]", "no-load speed [rpm]", "slot fill:", "stored as plan 3",
                           "fume", "isocyanates"}) {
    CAPTURE(want);
    CHECK(t.out.find(want) != std::string::npos);
  }
}

TEST_CASE("rewind plan: bad input gives one line naming the option and a non-zero exit") {
  TempDir dir;
  const std::string db = MakeDb(dir);
  const std::vector<std::pair<std::vector<std::string>, std::string>> cases = {
      {{"--from-fit", "1", "--old", "60xAWG", "--new", "36xAWG27"}, "--old"},
      {{"--from-fit", "1", "--old", "60xAWG30", "--new", "36x"}, "--new"},
      {{"--old", "60xAWG30", "--new", "36xAWG27"}, "baseline"},
      {{"--from-fit", "1", "--from-motor", "M-1", "--old", "60xAWG30", "--new", "36xAWG27"}, "baseline"},
      {{"--from-fit", "9", "--old", "60xAWG30", "--new", "36xAWG27"}, "9"},
      {{"--from-motor", "M-1R", "--old", "60xAWG30", "--new", "36xAWG27"}, "M-1R"},
      {{"--nameplate-resistance", "2", "--old", "60xAWG30", "--new", "36xAWG27"}, "--nameplate-kv"},
  };
  for (const auto& [args, word] : cases) {
    std::vector<std::string> full = {"--db", db, "rewind", "plan"};
    full.insert(full.end(), args.begin(), args.end());
    const CommandResult r = RunRotorbench(full);
    CAPTURE(r.err);
    CHECK(r.exit_code != 0);
    CHECK(r.err.find(word) != std::string::npos);
    CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
  }
  // Nothing was stored by the failures.
  CHECK(RunRotorbench({"--db", db, "rewind", "show", "--plan", "1"}).exit_code != 0);
}

TEST_CASE("rewind suggest: Kv and speed targets, bad target forms are refused") {
  TempDir dir;
  const std::string db = MakeDb(dir);
  json j = Json(RunRotorbench({"--db", db, "rewind", "suggest", "--from-fit", "1", "--old",
                               "60xAWG30", "--target-kv", "2000", "--json"}));
  REQUIRE_FALSE(j["suggestions"].empty());
  for (const json& s : j["suggestions"]) {
    CHECK(std::fabs(s["predicted"]["Kv_rpm_per_V"].get<double>() / 2000 - 1) <= 0.05);
    CHECK(s["fill"]["verdict"] != "will not fit");
  }
  j = Json(RunRotorbench({"--db", db, "rewind", "suggest", "--from-fit", "1", "--old", "60xAWG30",
                          "--target-speed", "12000@6", "--max-current", "8", "--json"}));
  REQUIRE_FALSE(j["suggestions"].empty());
  const CommandResult t = RunRotorbench({"--db", db, "rewind", "suggest", "--from-fit", "1",
                                         "--old", "60xAWG30", "--target-kv", "2000"});
  REQUIRE(t.exit_code == 0);
  CHECK(t.out.find("fits") != std::string::npos);
  for (const char* bad : {"12000", "12000@", "fast@6", "12000@6V"}) {
    const CommandResult r = RunRotorbench({"--db", db, "rewind", "suggest", "--from-fit", "1",
                                           "--old", "60xAWG30", "--target-speed", bad});
    CAPTURE(bad);
    CHECK(r.exit_code != 0);
    CHECK(r.err.find("--target-speed") != std::string::npos);
  }
}

TEST_CASE("rewind verify: a stored fit as planned matches, 20 % fewer turns does not") {
  TempDir dir;
  const std::string db = MakeDb(dir);
  const json plan = Json(RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old",
                                        "60xAWG30", "--new", "48xAWG29", "--json"}));
  model::MotorParams good = model::DemoMotor(), short_turns = model::DemoMotor();
  good.R = plan["predicted"]["R_ohm"].get<double>();
  good.Ke = plan["predicted"]["Ke_V_s_per_rad"].get<double>();
  short_turns.R = good.R * 0.8;
  short_turns.Ke = good.Ke * 0.8;
  {
    storage::Database d = storage::Database::Open(db).value();
    REQUIRE(fit::StoreFit(d, FitOf("M-1R", good)).ok());         // fit 2
    REQUIRE(fit::StoreFit(d, FitOf("M-1R", short_turns)).ok());  // fit 3
  }
  json v = Json(RunRotorbench({"--db", db, "rewind", "verify", "--plan", "1", "--motor", "M-1R",
                               "--fit", "2", "--json"}));
  CHECK(v["verdict"] == "matches");
  // Without --fit: the latest fit (3).
  v = Json(RunRotorbench({"--db", db, "rewind", "verify", "--plan", "1", "--motor", "M-1R", "--json"}));
  CHECK(v["fit_id"] == 3);
  CHECK(v["verdict"] == "does not match");
  REQUIRE_FALSE(v["hints"].empty());
  CHECK(v["hints"][0]["cause"] == "turn count off");
  const CommandResult t = RunRotorbench({"--db", db, "rewind", "verify", "--plan", "1", "--motor",
                                         "M-1R", "--fit", "3"});
  REQUIRE(t.exit_code == 0);
  CHECK(t.out.find("verdict: does not match") != std::string::npos);
  CHECK(t.out.find("turn count off") != std::string::npos);
  // A fit of another motor is refused.
  CHECK(RunRotorbench({"--db", db, "rewind", "verify", "--plan", "1", "--motor", "M-1R", "--fit",
                       "1"}).exit_code != 0);
}

TEST_CASE("rewind plan --load-run: c from a loaded run and the rewound motor on that load") {
  TempDir dir;
  const std::string db = MakeDb(dir);
  model::BenchModel bench = model::DemoBench(7);
  bench.load.fan_c = 1.8e-8;
  model::RunScript script;
  script.kind = model::RunKind::kLoaded;
  script.volts = 6.0;
  script.duration_s = 1.0;
  const model::SimulatedRun run = *model::SimulateRun(bench, script);
  {
    storage::Database d = storage::Database::Open(db).value();
    storage::NewRun nr;
    nr.motor_id = d.FindMotor("M-1")->id;
    nr.kind = model::RunKind::kLoaded;
    nr.started_utc = "2024-01-01T00:00:00Z";
    nr.source = "sim";
    nr.nominal_voltage = 6.0;
    REQUIRE(d.ImportRun(nr, run.samples).ok());  // run 2
  }
  const json j = Json(RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old",
                                     "60xAWG30", "--new", "50xAWG29", "--load-run", "2", "--json"}));
  CHECK(j["load"]["fan_c_N_m_s2_per_rad2"].get<double>() == doctest::Approx(1.8e-8).epsilon(0.03));
  CHECK(j["loaded"]["predicted"]["speed_rad_s"].get<double>() >
        j["loaded"]["baseline"]["speed_rad_s"].get<double>());
  // A spin-up run is not a load run; a missing run is named.
  CommandResult r = RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old",
                                   "60xAWG30", "--new", "50xAWG29", "--load-run", "1"});
  CHECK(r.exit_code != 0);
  CHECK(r.err.find("'loaded'") != std::string::npos);
  r = RunRotorbench({"--db", db, "rewind", "plan", "--from-fit", "1", "--old", "60xAWG30",
                     "--new", "50xAWG29", "--load-run", "7"});
  CHECK(r.exit_code != 0);
  CHECK(r.err.find("--load-run") != std::string::npos);
}

TEST_CASE("rewind wires lists the catalogue with its sources") {
  const CommandResult r = RunRotorbench({"rewind", "wires", "--json"});
  const json j = Json(r);
  bool found = false;
  for (const json& w : j) found |= w["name"] == "AWG30";
  CHECK(found);
  const CommandResult t = RunRotorbench({"rewind", "wires"});
  CHECK(t.out.find("ASTM B258") != std::string::npos);
}
