// rotorbench qa through the real binary: the relied-upon command forms and their errors.
#include <doctest/doctest.h>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "fit/fit.h"
#include "qa/sampling.h"
#include "storage/storage.h"
#include "tests/testutil.h"

using namespace rb;
using nlohmann::json;
using rb::testing::CommandResult;
using rb::testing::Fixture;
using rb::testing::RunRotorbench;
using rb::testing::TempDir;

namespace {

// Stores a fit of the invented demo motor with Ke scaled by `ke_factor`, 0.5 % uncertainty.
void AddMotorWithFit(storage::Database& db, const std::string& label, const std::string& batch,
                     double ke_factor) {
  REQUIRE(db.AddMotor(label, batch, "").ok());
  fit::FitSummary s;
  s.motor = label;
  const double vals[] = {1.8, 0, 6.2e-3 * ke_factor, 1.6e-6, 0.4e-3, 2e-7, 0.15};
  for (int i = 0; i < model::kNumParams; ++i) {
    const bool fitted = i != model::kL;
    s.params[static_cast<size_t>(i)] = {fitted, vals[i], 0.005 * vals[i], 0.005 * vals[i]};
    if (fitted) s.covariance(i, i) = std::pow(0.005 * vals[i], 2);
  }
  s.R20 = 1.8;
  s.R20_u = 0.009;
  s.temperature_C = 21.0;
  REQUIRE(fit::StoreFit(db, s).ok());
}

int Lines(const std::string& s) { return static_cast<int>(std::count(s.begin(), s.end(), '\n')); }

}  // namespace

TEST_CASE("qa plan --lot --aql --ltpd [--alpha --beta] --json prints n and c (relied upon)") {
  CommandResult r = RunRotorbench({"qa", "plan", "--lot", "5000", "--aql", "1", "--ltpd", "5",
                                   "--alpha", "0.05", "--beta", "0.1", "--json"});
  REQUIRE(r.exit_code == 0);
  const json j = json::parse(r.out);
  const int n = j["n"].get<int>(), c = j["c"].get<int>();
  // The printed plan meets both risks (binomial OC: n ≤ 10 % of 5000).
  CHECK(j["oc_model"] == "binomial");
  CHECK(qa::BinomialAcceptance(n, c, 0.01) >= 0.95);
  CHECK(qa::BinomialAcceptance(n, c, 0.05) <= 0.10);
  CHECK(j["oc"].size() > 10);
  // Defaults α = 0.05, β = 0.10 give the same plan.
  CommandResult d =
      RunRotorbench({"qa", "plan", "--lot", "5000", "--aql", "1", "--ltpd", "5", "--json"});
  REQUIRE(d.exit_code == 0);
  CHECK(json::parse(d.out)["n"] == n);
  CHECK(json::parse(d.out)["c"] == c);
  // Text form and errors.
  CommandResult t = RunRotorbench({"qa", "plan", "--lot", "5000", "--aql", "1", "--ltpd", "5"});
  CHECK(t.out.find(fmt::format("n = {}", n)) != std::string::npos);
  CommandResult bad = RunRotorbench({"qa", "plan", "--lot", "5000", "--aql", "5", "--ltpd", "1"});
  CHECK(bad.exit_code == 1);
  CHECK(bad.err.find("rotorbench: error: --ltpd 1") == 0);
  CHECK(Lines(bad.err) == 1);
}

TEST_CASE("qa spec: a bad spec is one line naming file and line, exit 1") {
  TempDir dir;
  const std::string f = dir.File("bad.toml");
  rb::testing::WriteFile(f,
                         "rotorbench_spec = 1\nname = \"x\"\n[kv]\nunit = \"rpm/min\"\nmax = 9\n");
  CommandResult r = RunRotorbench({"qa", "spec", f});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("rotorbench: error: " + f + ":4: [kv] unit \"rpm/min\"") == 0);
  CHECK(Lines(r.err) == 1);
  CommandResult ok = RunRotorbench({"qa", "spec", Fixture("specs/demo-6v.toml")});
  CHECK(ok.exit_code == 0);
  CHECK(ok.out.find("no-load speed at 6 V") != std::string::npos);
}

TEST_CASE("qa check --spec --motor and qa batch --spec --batch (relied upon)") {
  TempDir dir;
  const std::string path = dir.File("bench.db");
  {
    Result<storage::Database> db = storage::Database::Open(path);
    REQUIRE(db.ok());
    AddMotorWithFit(*db, "M-1", "lot-7", 1.0);
    AddMotorWithFit(*db, "M-2", "lot-7", 0.85);  // Kv 18 % high: fails
    AddMotorWithFit(*db, "M-3", "lot-7", 1.01);
    REQUIRE(db->AddMotor("M-4", "lot-7", "").ok());  // never fitted
  }
  const std::string spec = Fixture("specs/demo-6v.toml");
  CommandResult c = RunRotorbench({"--db", path, "qa", "check", "--spec", spec, "--motor", "M-1"});
  REQUIRE(c.exit_code == 0);
  CHECK(c.out.find("overall: PASS") != std::string::npos);
  CommandResult cj =
      RunRotorbench({"--db", path, "qa", "check", "--spec", spec, "--motor", "M-2", "--json"});
  REQUIRE(cj.exit_code == 0);
  const json j = json::parse(cj.out);
  CHECK(j["verdict"] == "fail");
  CHECK(j["quantities"][0]["key"] == "kv");
  CHECK(j["quantities"][0]["verdict"] == "fail");
  CHECK(j["quantities"][0]["unit"] == "rpm/V");
  // Not fitted: a one-line error saying what to do.
  CommandResult nf = RunRotorbench({"--db", path, "qa", "check", "--spec", spec, "--motor", "M-4"});
  CHECK(nf.exit_code == 1);
  CHECK(nf.err.find("has no fit yet") != std::string::npos);

  for (const char* format : {"table", "csv", "json"}) {
    CAPTURE(format);
    CommandResult b = RunRotorbench(
        {"--db", path, "qa", "batch", "--spec", spec, "--batch", "lot-7", "--format", format});
    REQUIRE(b.exit_code == 0);
    if (std::string(format) == "json") {
      const json bj = json::parse(b.out);
      CHECK(bj["verdict"] == "fail");
      CHECK(bj["motors"].size() == 3);
      CHECK(bj["unmeasured"].size() == 1);
    } else {
      CHECK(b.out.find("M-2") != std::string::npos);
      CHECK(b.out.find("M-4") != std::string::npos);
    }
  }
  CommandResult none =
      RunRotorbench({"--db", path, "qa", "batch", "--spec", spec, "--batch", "lot-99"});
  CHECK(none.exit_code == 1);
  CHECK(none.err.find("no motors in batch 'lot-99'") != std::string::npos);
}
