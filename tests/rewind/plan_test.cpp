// Suggestions (the inverse problem) and the stored plan form.
#include <doctest/doctest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "model/demo.h"
#include "model/units.h"
#include "rewind/rewind.h"

using namespace rb;
using namespace rb::rewind;

namespace {

Baseline DemoBaseline() {
  Baseline b;
  b.source = "test";
  b.estimate.value = model::DemoMotor();
  b.estimate.cov(model::kR, model::kR) = std::pow(0.01 * b.estimate.value.R, 2);
  b.estimate.cov(model::kKe, model::kKe) = std::pow(0.005 * b.estimate.value.Ke, 2);
  b.r_at_20C = true;
  return b;
}

}  // namespace

TEST_CASE("suggest for a Kv target: every answer reaches it within 5 % and fits, ranked") {
  const Baseline b = DemoBaseline();
  const model::Winding old_w = *model::ParseWinding("60xAWG30");
  SuggestTarget t;
  t.kind = SuggestTarget::Kind::kKe;
  t.value = units::KvRpmPerVoltToKe(2000);
  t.voltage = 6.0;
  SuggestOptions o;
  o.limit = 50;
  const std::vector<Suggestion> s = *SuggestWindings(b, old_w, t, o);
  REQUIRE_FALSE(s.empty());
  // Ke ∝ N: 60 turns at 1540 rpm/V → 46.2 turns for 2000 rpm/V.
  const double kv0 = units::KeToKvRpmPerVolt(b.estimate.value.Ke);
  for (const Suggestion& x : s) {
    const model::Winding& w = x.prediction.new_winding;
    CAPTURE(w.Spec());
    CHECK(units::KeToKvRpmPerVolt(x.prediction.predicted.value.Ke) ==
          doctest::Approx(kv0 * 60 / w.turns));
    CHECK(std::fabs(units::KeToKvRpmPerVolt(x.achieved) / 2000 - 1) <= 0.05);
    CHECK(x.prediction.fill.verdict != FillVerdict::kWillNotFit);
  }
  for (size_t i = 1; i < s.size(); ++i) {
    CHECK(s[i - 1].prediction.fill.verdict <= s[i].prediction.fill.verdict);
  }
  CHECK(s.front().prediction.fill.verdict == FillVerdict::kFits);
  CHECK((s.front().prediction.new_winding.turns == 46 || s.front().prediction.new_winding.turns == 47));
}

TEST_CASE("suggest for a no-load speed target with a current limit") {
  const Baseline b = DemoBaseline();
  const model::Winding old_w = *model::ParseWinding("60xAWG30");
  SuggestTarget t;
  t.kind = SuggestTarget::Kind::kNoLoadSpeed;
  t.value = units::RpmToRadPerSec(11000);
  t.voltage = 6.0;
  t.max_stall_current = 5.0;
  const std::vector<Suggestion> s = *SuggestWindings(b, old_w, t, {});
  REQUIRE_FALSE(s.empty());
  for (const Suggestion& x : s) {
    CHECK(x.prediction.predicted_char.nominal.no_load_speed ==
          doctest::Approx(t.value).epsilon(0.05));
    CHECK(x.prediction.predicted_char.nominal.stall_current <= 5.0);
  }
  // An impossible limit leaves nothing.
  t.max_stall_current = 0.01;
  CHECK(SuggestWindings(b, old_w, t, {})->empty());
}

TEST_CASE("plan JSON: the fitter's parameter names, SI values, and a faithful round trip") {
  Plan plan;
  PlanOptions o;
  o.voltage = 6.0;
  o.dims.stack_length = 20e-3;
  o.dims.tooth_width = 4e-3;
  o.dims.build_depth = 3e-3;
  plan.prediction = *PredictRewind(DemoBaseline(), *model::ParseWinding("60xAWG30"),
                                   *model::ParseWinding("36x2xAWG30:single"), o);
  FanLoadEstimate load;
  load.c = 1.8e-8;
  load.speed = 600;
  load.v_terminal = 5.9;
  load.v_source = 6.0;
  load.r_source = 0.08;
  plan.load = load;
  plan.loaded = PredictLoaded(plan.prediction, load);
  const nlohmann::json j = PlanToJson(plan);
  for (const char* k : {"R_ohm", "Ke_V_s_per_rad", "Kt_N_m_per_A", "Kv_rpm_per_V", "J_kg_m2",
                        "Tc_N_m", "b_N_m_s_per_rad", "L_H", "Vb_V"}) {
    CAPTURE(k);
    CHECK(j["baseline"].contains(k));
    CHECK(j["predicted"].contains(k));
  }
  CHECK(j["predicted"]["R_ohm"].get<double>() == doctest::Approx(plan.prediction.predicted.value.R));
  CHECK(j["predicted"]["Kv_rpm_per_V"].get<double>() ==
        doctest::Approx(units::KeToKvRpmPerVolt(plan.prediction.predicted.value.Ke)));
  CHECK(j["fill"]["verdict"].is_string());
  CHECK(j["new"]["spec"] == "36x2xAWG30");
  CHECK(j["new"]["wire"]["insulation"] == "single");

  const Plan back = *PlanFromJson(nlohmann::json::parse(j.dump()));
  CHECK(back.prediction.predicted.value.R == doctest::Approx(plan.prediction.predicted.value.R));
  CHECK(back.prediction.predicted.cov(model::kR, model::kKe) ==
        doctest::Approx(plan.prediction.predicted.cov(model::kR, model::kKe)));
  CHECK(back.prediction.new_winding.wire.insulation == model::Insulation::kSingle);
  CHECK(back.prediction.new_winding.strands == 2);
  REQUIRE(back.loaded);
  CHECK(back.loaded->predicted.speed == doctest::Approx(plan.loaded->predicted.speed));
  const PlanCurves c = CurvesForReport(back, 11);
  REQUIRE(c.predicted_curves.value.size() == 11);
  CHECK(c.predicted_curves.value.front().speed ==
        doctest::Approx(back.prediction.predicted_char.nominal.no_load_speed));
  CHECK(c.predicted_curves.u.front().speed ==
        doctest::Approx(back.prediction.predicted_char.u(model::kNoLoadSpeed)).epsilon(1e-3));
  CHECK_FALSE(PlanFromJson(nlohmann::json{{"format", "something else"}}).ok());
}
