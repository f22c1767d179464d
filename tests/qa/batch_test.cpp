// Batch summaries: statistics, outlier flags and the batch verdict rule.
#include "qa/batch.h"

#include <doctest/doctest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>
#include <vector>

#include "model/params.h"
#include "qa/format.h"

using namespace rb;
using namespace rb::qa;

namespace {

// A fit whose only uncertain parameter is Ke (relative standard uncertainty `rel`).
fit::FitSummary FitWithKe(const std::string& label, double ke, double rel) {
  fit::FitSummary s;
  s.motor = label;
  s.params[model::kKe] = {true, ke, rel * ke, rel * ke};
  s.covariance(model::kKe, model::kKe) = std::pow(rel * ke, 2);
  return s;
}

Spec KvSpec(int accept_number) {
  // Kv 1540 rpm/V ± 5 %: 1463 … 1617 rpm/V, held in rad/(V·s).
  Limit l;
  l.quantity = SpecQuantity::kKv;
  l.unit = "rpm/V";
  l.unit_scale = std::numbers::pi / 30.0;
  l.nominal = 1540.0 * l.unit_scale;
  l.lower = 1463.0 * l.unit_scale;
  l.upper = 1617.0 * l.unit_scale;
  Spec s;
  s.name = "kv only";
  s.limits = {l};
  s.accept_number = accept_number;
  return s;
}

double KeForKv(double kv_rpm_per_v) { return 60.0 / (2 * std::numbers::pi * kv_rpm_per_v); }

BatchSummary Run(const std::vector<double>& kv, double rel, int accept_number) {
  const Spec spec = KvSpec(accept_number);
  std::vector<MotorCheck> checks;
  for (size_t i = 0; i < kv.size(); ++i) {
    checks.push_back(
        CheckFit(FitWithKe("M-" + std::to_string(i + 1), KeForKv(kv[i]), rel), spec, {}));
  }
  return SummarizeBatch("B-1", spec, std::move(checks), {}, {});
}

}  // namespace

TEST_CASE("a batch with one motor far off: statistics, the outlier, the failing motor") {
  // Nine motors near 1540 rpm/V and one at 1780 (15.6 % high). Measured to 0.2 %.
  const std::vector<double> kv = {1540, 1552, 1528, 1546, 1534, 1543, 1537, 1550, 1530, 1780};
  const BatchSummary b = Run(kv, 0.002, 0);
  REQUIRE(b.stats.size() == 1);
  const QuantityStats& s = b.stats[0];
  const Limit& l = s.limit;
  // Mean and sample sd in rpm/V by hand: Σ = 15640 → mean 1564.0;
  // deviations −24 −12 −36 −18 −30 −21 −27 −14 −34 216; Σd² = 576+144+1296+324+900+441
  // +729+196+1156+46656 = 52418; s² = 52418/9 = 5824.222, s = 76.31659.
  CHECK(l.ToUnit(s.describe.mean) == doctest::Approx(1564.0).epsilon(1e-9));
  CHECK(l.ToUnit(s.describe.sd) == doctest::Approx(76.31659).epsilon(1e-6));
  CHECK(l.ToUnit(s.describe.min) == doctest::Approx(1528.0));
  CHECK(l.ToUnit(s.describe.max) == doctest::Approx(1780.0));
  // Cpk = (1617 − 1564)/(3·76.31659) = 53/228.9498 = 0.23149 (the upper side is nearer).
  REQUIRE(s.cpk.available);
  CHECK(s.cpk.cpk == doctest::Approx(0.23149).epsilon(1e-5));
  CHECK(s.cpk.note.find("small sample") != std::string::npos);
  // M-10: Grubbs statistic (1780 − 1564)/76.31659 = 2.8303 > G(10, 0.05) = 2.290 → outlier.
  CHECK(s.outliers.tested);
  CHECK(s.IsOutlier(9));
  for (int m = 0; m < 9; ++m) CHECK_FALSE(s.IsOutlier(m));
  CHECK(s.outliers.steps[0].statistic == doctest::Approx(216.0 / 76.31659).epsilon(1e-6));
  // Verdicts: nine pass, M-10 fails; accept number 0 → reject.
  CHECK(b.pass == 9);
  CHECK(b.fail == 1);
  CHECK(b.motors[9].overall == Verdict::kFail);
  CHECK(b.verdict == Verdict::kFail);
  CHECK(b.verdict_text.find("reject") == 0);
  // With accept number 1 the same batch is accepted.
  CHECK(Run(kv, 0.002, 1).verdict == Verdict::kPass);
}

TEST_CASE("batch verdict: inconclusive motors leave the decision open, never a false accept") {
  // M-3 at 1612 rpm/V with U = 2·1 % ≈ 32 straddles the 1617 limit → inconclusive.
  const std::vector<double> kv = {1540, 1545, 1612, 1535, 1538, 1541, 1549};
  const BatchSummary b = Run(kv, 0.01, 0);
  CHECK(b.motors[2].overall == Verdict::kInconclusive);
  CHECK(b.fail == 0);
  CHECK(b.inconclusive == 1);
  CHECK(b.verdict == Verdict::kInconclusive);  // not "pass"
  CHECK(b.verdict_text.find("re-measure") != std::string::npos);
  // Accept number 1 covers one undecided motor.
  CHECK(Run(kv, 0.01, 1).verdict == Verdict::kPass);
  // The table says so, with the bench caution for re-measuring.
  const std::string table = FormatBatchTable(b);
  CHECK(table.find("INCONCLUSIVE") != std::string::npos);
  CHECK(table.find("spinning parts") != std::string::npos);
}

TEST_CASE("batch printed forms carry one row per motor and the statistics") {
  const std::vector<double> kv = {1540, 1552, 1528, 1546, 1534, 1543, 1537, 1550, 1530, 1780};
  const BatchSummary b = Run(kv, 0.002, 0);
  const nlohmann::json j = BatchJson(b);
  CHECK(j["motors"].size() == 10);
  CHECK(j["verdict"] == "fail");
  CHECK(j["quantities"][0]["mean"].get<double>() == doctest::Approx(1564.0));
  CHECK(j["quantities"][0]["outliers"]["motors"] == nlohmann::json::array({"M-10"}));
  CHECK(j["motors"][9]["quantities"][0]["outlier"] == true);
  const std::string csv = FormatBatchCsv(b);
  CHECK(csv.find("row,verdict,kv [rpm/V],kv U,kv verdict\n") == 0);
  CHECK(csv.find("\nM-10,fail,1780,") != std::string::npos);
  CHECK(csv.find("fail; outlier") != std::string::npos);
  CHECK(csv.find("\nmean,,1564,") != std::string::npos);
  const std::string table = FormatBatchTable(b);
  CHECK(table.find("M-10") != std::string::npos);
  CHECK(table.find("generalized ESD") != std::string::npos);
}
