// Verification logic and its hints, on fits built from known truths: the planned motor,
// and the same armature with 20 % fewer turns, one coil open, one coil reversed, a wire
// one size off, and a poor joint. The fault signatures come from the ring-armature
// circuit (model/winding_faults.h, tested against model/commutator and closed forms);
// the fitted round trip through simulated runs is in round_trip_test.cpp.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "model/demo.h"
#include "model/winding_faults.h"
#include "rewind/rewind.h"

using namespace rb;
using namespace rb::rewind;

namespace {

/// A fit summary of `p` with relative combined uncertainties typical of a bench fit
/// (R 1 %, Ke 0.5 %, Tc 5 %, b 10 %, J 3 %); L and Vb held fixed.
fit::FitSummary FitOf(const model::MotorParams& p) {
  fit::FitSummary s;
  s.motor = "test";
  const double rel[model::kNumParams] = {0.01, 0, 0.005, 0.03, 0.05, 0.1, 0};
  for (int i = 0; i < model::kNumParams; ++i) {
    fit::ParamResult& r = s.params[static_cast<size_t>(i)];
    r.value = model::Get(p, i);
    r.fitted = rel[i] > 0;
    r.u_combined = rel[i] * std::fabs(r.value);
    r.stderr_stat = r.u_combined;
    s.covariance(i, i) = r.u_combined * r.u_combined;
  }
  s.covariance_stat = s.covariance;
  return s;
}

Plan MakePlan() {
  Baseline b = BaselineFromFit(FitOf(model::DemoMotor()), 1);
  PlanOptions o;
  o.voltage = 6.0;
  Plan plan;
  plan.prediction =
      *PredictRewind(b, *model::ParseWinding("60xAWG30"), *model::ParseWinding("48xAWG29"), o);
  return plan;
}

model::MotorParams Planned(const Plan& p) { return p.prediction.predicted.value; }

}  // namespace

TEST_CASE("verify: the motor as planned matches") {
  const Plan plan = MakePlan();
  model::MotorParams m = Planned(plan);
  m.R *= 1.01;  // within the combined uncertainty
  m.Ke *= 0.995;
  const Verification v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "matches");
  CHECK(v.hints.empty());
  for (const ParamCheck& c : v.params) CHECK(c.verdict == "matches");
  CHECK_FALSE(v.figures.empty());
}

TEST_CASE("verify: 20 % fewer turns than planned → does not match, turn count off") {
  // Same wire, 20 % fewer turns: Ke × 0.8 and R × 0.8 (domain.md §3.1 scaling).
  const Plan plan = MakePlan();
  model::MotorParams m = Planned(plan);
  m.R *= 0.8;
  m.Ke *= 0.8;
  const Verification v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "does not match");
  REQUIRE_FALSE(v.hints.empty());
  CHECK(v.hints.front().cause == "turn count off");
  CHECK(v.hints.front().detail.find("38 turns") != std::string::npos);  // 0.8 × 48 = 38.4
}

TEST_CASE("verify: one coil open → does not match, one coil open") {
  const Plan plan = MakePlan();
  const FaultHypothesis open = RingFaultHypotheses(3).front();
  REQUIRE(open.cause == "one coil open");
  model::MotorParams m = Planned(plan);
  const model::FaultSignature s = model::RingFaultSignature(
      3, 0.2, 1, {std::numeric_limits<double>::infinity(), 1.0});
  m.R *= s.resistance_ratio;
  m.Ke *= s.ke_ratio;
  const Verification v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "does not match");
  REQUIRE_FALSE(v.hints.empty());
  CHECK(v.hints.front().cause == "one coil open");
}

TEST_CASE("verify: one coil reversed → does not match, one coil reversed") {
  const Plan plan = MakePlan();
  model::MotorParams m = Planned(plan);
  const model::FaultSignature s = model::RingFaultSignature(3, 0.2, 2, {1.0, -1.0});
  const double drag_unit = m.Ke * m.Ke / m.R;
  m.R *= s.resistance_ratio;
  m.Ke *= s.ke_ratio;
  m.b += s.drag * drag_unit;
  const Verification v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "does not match");
  REQUIRE_FALSE(v.hints.empty());
  CHECK(v.hints.front().cause == "one coil reversed");
}

TEST_CASE("verify: a wire one size thinner → wrong wire, a poor joint → poor joint") {
  const Plan plan = MakePlan();
  model::MotorParams m = Planned(plan);
  m.R *= model::AwgWire(29)->Area() / model::AwgWire(30)->Area();  // AWG30 wound instead
  Verification v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "does not match");
  REQUIRE_FALSE(v.hints.empty());
  CHECK(v.hints.front().cause == "wrong wire");
  CHECK(v.hints.front().detail.find("AWG30") != std::string::npos);

  m = Planned(plan);
  const model::FaultSignature s = model::RingFaultSignature(3, 0.2, 0, {1.6, 1.0});
  m.R *= s.resistance_ratio;  // a joint adding 0.6·Rc to one coil
  m.Ke *= s.ke_ratio;
  v = VerifyRewind(plan, FitOf(m));
  CHECK(v.verdict == "does not match");
  REQUIRE_FALSE(v.hints.empty());
  CHECK(v.hints.front().cause == "poor joint");
}

TEST_CASE("fault hypotheses for a 3-coil armature: open raises R, reversed cuts Ke to 1/3") {
  const std::vector<FaultHypothesis> h = RingFaultHypotheses(3);
  REQUIRE(h.size() == 2);
  // Knife-edge 1.8 (closed form) down to ≈1.59 at brushes 0.3 of a pitch wide.
  CHECK(h[0].r_ratio > 1.55);
  CHECK(h[0].r_ratio < 1.8);
  CHECK(h[0].ke_ratio == doctest::Approx(1.0).epsilon(0.01));
  CHECK(h[1].ke_ratio == doctest::Approx(1.0 / 3.0).epsilon(0.01));
  CHECK(h[1].r_ratio == doctest::Approx(1.0).epsilon(1e-6));
  CHECK(h[1].drag > 0.5);
}
