// `rotorbench fit`, `fit list`, `fit show` through the real binary, on a database filled by
// `rotorbench simulate` + `import` (the demo motor of model/demo.h is the simulated truth).
#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>

#include "model/demo.h"
#include "model/units.h"
#include "tests/testutil.h"

using nlohmann::json;
using rb::testing::CommandResult;
using rb::testing::RunRotorbench;
using rb::testing::TempDir;

namespace {

int Lines(const std::string& s) { return static_cast<int>(std::count(s.begin(), s.end(), '\n')); }

/// Simulates a run with `rotorbench simulate` and imports it; returns false on failure.
bool AddRun(const TempDir& dir, const std::string& db, const std::string& motor,
            const std::string& kind, double volts, int seed, double angle_deg = 0) {
  const std::string csv = dir.File("run" + std::to_string(seed) + ".csv");
  const std::string v = std::to_string(volts);
  CommandResult s = RunRotorbench({"simulate", "--kind", kind, "--volts", v, "--seed",
                                   std::to_string(seed), "--rotor-angle",
                                   std::to_string(angle_deg), "--out", csv});
  if (s.exit_code != 0) return false;
  CommandResult i = RunRotorbench({"--db", db, "import", csv, "--motor", motor, "--kind", kind,
                                   "--supply-volts", v, "--ambient", "20"});
  return i.exit_code == 0;
}

std::string FitList(const std::string& db) {
  return RunRotorbench({"--db", db, "fit", "list", "--json"}).out;
}

}  // namespace

TEST_CASE("fit --motor --json: the standard plan's constants, stored and shown again") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M-7"}).exit_code == 0);
  int seed = 1;
  for (double a : {0.0, 20.0, 40.0}) REQUIRE(AddRun(dir, db, "M-7", "locked", 2.0, seed++, a));
  for (double v : {3.0, 6.0}) {
    REQUIRE(AddRun(dir, db, "M-7", "spinup", v, seed++));
    REQUIRE(AddRun(dir, db, "M-7", "coastdown", v, seed++));
  }

  CommandResult r = RunRotorbench({"--db", db, "fit", "--motor", "M-7", "--json"});
  REQUIRE_MESSAGE(r.exit_code == 0, r.err);
  const json j = json::parse(r.out);
  CHECK(j["motor"] == "M-7");
  // Source: simulated truth, the demo motor (model/demo.h); tolerances of the fitter's
  // specification (R 2 %, Ke 1 %, J 5 %), here without a current gain error.
  const rb::model::MotorParams truth = rb::model::DemoMotor();
  const json& p = j["parameters"];
  for (const char* name : {"R_ohm", "Ke_V_s_per_rad", "Kt_N_m_per_A", "Kv_rpm_per_V", "J_kg_m2",
                           "Tc_N_m", "b_N_m_s_per_rad", "L_H", "Vb_V"}) {
    REQUIRE_MESSAGE(p.contains(name), name);
    CHECK(p[name].contains("value"));
    CHECK(p[name].contains("stderr"));
  }
  CHECK(p["R_ohm"]["value"].get<double>() == doctest::Approx(truth.R).epsilon(0.02));
  CHECK(p["Ke_V_s_per_rad"]["value"].get<double>() == doctest::Approx(truth.Ke).epsilon(0.01));
  CHECK(p["Kv_rpm_per_V"]["value"].get<double>() ==
        doctest::Approx(rb::units::KeToKvRpmPerVolt(truth.Ke)).epsilon(0.01));
  CHECK(p["J_kg_m2"]["value"].get<double>() == doctest::Approx(truth.J).epsilon(0.05));
  CHECK(p["R_ohm"]["stderr"].get<double>() > 0);
  CHECK(j["diagnostics"].is_array());
  REQUIRE(j["runs"].size() == 7);
  CHECK(j["runs"][0]["channels"][0].contains("rms"));
  const std::int64_t id = j["fit_id"].get<std::int64_t>();

  // Stored: listed, and shown with the same numbers plus the characteristics.
  const json list = json::parse(FitList(db));
  REQUIRE(list.size() == 1);
  CHECK(list[0]["id"] == id);
  CHECK(list[0]["R_ohm"].get<double>() == p["R_ohm"]["value"].get<double>());
  CommandResult show = RunRotorbench({"--db", db, "fit", "show", std::to_string(id)});
  REQUIRE_MESSAGE(show.exit_code == 0, show.err);
  for (const char* words : {"Kv", "rpm/V", "mN·m/A", "g·cm²", "R at 20 °C", "no-load speed",
                            "stall current", "maximum efficiency", "residuals per run"}) {
    CHECK_MESSAGE(show.out.find(words) != std::string::npos, words);
  }
  CommandResult shown = RunRotorbench({"--db", db, "fit", "show", std::to_string(id), "--json"});
  REQUIRE(shown.exit_code == 0);
  CHECK(json::parse(shown.out)["parameters"]["R_ohm"]["value"] == p["R_ohm"]["value"]);

  // The report plots the fitted model over the runs.
  const std::string html = dir.File("r.html");
  CommandResult rep = RunRotorbench({"--db", db, "report", "--motor", "M-7", "--out", html});
  REQUIRE_MESSAGE(rep.exit_code == 0, rep.err);
  const std::string text = rb::testing::ReadFile(html);
  CHECK(text.find("no model prediction available") == std::string::npos);
}

TEST_CASE("fit: one-line errors, exit != 0, nothing stored") {
  TempDir dir;
  const std::string db = dir.File("bench.db");
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "A"}).exit_code == 0);
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "B"}).exit_code == 0);
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "C"}).exit_code == 0);  // no runs
  REQUIRE(AddRun(dir, db, "A", "steady", 6.0, 1));  // run 1: one steady state
  REQUIRE(AddRun(dir, db, "B", "spinup", 6.0, 2));  // run 2
  struct Case {
    std::vector<std::string> args;
    const char* says;
  };
  const Case cases[] = {
      {{"fit", "--motor", "nobody"}, "nobody"},
      {{"fit", "--motor", "C"}, "no finished runs"},
      {{"fit"}, "--motor"},
      {{"fit", "--motor", "A", "--runs", "1,2"}, "belongs to motor"},
      {{"fit", "--motor", "A"}, "cannot determine"},  // a single steady state
      {{"fit", "--motor", "A", "--model", "basic+magic"}, "unknown model"},
      {{"fit", "show", "42"}, "not found"},
  };
  for (const Case& c : cases) {
    std::vector<std::string> args = {"--db", db};
    args.insert(args.end(), c.args.begin(), c.args.end());
    CommandResult r = RunRotorbench(args);
    CHECK_MESSAGE(r.exit_code != 0, c.says);
    CHECK_MESSAGE(Lines(r.err) == 1, r.err);
    CHECK_MESSAGE(r.err.find(c.says) != std::string::npos, r.err);
  }
  CHECK(json::parse(FitList(db)).empty());
}
