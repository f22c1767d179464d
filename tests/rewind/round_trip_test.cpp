// Rewind round trip through the real fitter. The bench simulator (model/simulate.h, the
// invented demo motor with realistic instruments and a current-sensor gain error) runs the
// standard plan on a baseline motor; its fit is the plan's baseline (60 turns of AWG 30 →
// 48 turns of AWG 29). The rewound motor is then simulated — as planned, with 20 % fewer
// turns than planned, and with one coil open — fitted the same way, and verified.
// Truth for the rewound motors from the scaling laws (domain notes §3.1: Ke ∝ N,
// R ∝ N / wire area at equal mean turn, L ∝ N², mechanics unchanged) and, for the open
// coil, the ring-armature circuit (model/winding_faults.h, itself checked against the
// commutator model and closed forms in tests/model) — it enters the simulator as its
// rotation-averaged R and Ke ratios, since the simulated commutator has no per-coil faults.
#include <doctest/doctest.h>

#include <limits>

#include "model/winding_faults.h"
#include "rewind/rewind.h"
#include "tests/fit/plan.h"

using namespace rb;
using namespace rb::rewind;

namespace {

fit::FitSummary FitBench(const model::BenchModel& bench, std::uint64_t seed) {
  const std::vector<fit::RunData> runs = testing::StandardPlan(bench, seed);
  Result<fit::FitSummary> s = fit::FitRuns(runs, {});
  REQUIRE_MESSAGE(s.ok(), s.status().message());
  return *s;
}

/// The motor wound with `turns` of the wire whose copper area is `area` instead of
/// 60 turns of AWG 30 (same mean turn length).
model::MotorParams Rewound(model::MotorParams m, double turns, double area) {
  const double n = turns / 60.0;
  const double a = model::AwgWire(30)->Area() / area;
  m.Ke *= n;
  m.R *= n * a;
  m.L *= n * n;
  return m;
}

Plan MakePlan(const fit::FitSummary& baseline_fit) {
  PlanOptions o;
  o.voltage = 6.0;
  Plan plan;
  Result<Prediction> p = PredictRewind(BaselineFromFit(baseline_fit, 1), *model::ParseWinding("60xAWG30"),
                                       *model::ParseWinding("48xAWG29"), o);
  REQUIRE_MESSAGE(p.ok(), p.status().message());
  plan.prediction = *p;
  return plan;
}

}  // namespace

TEST_CASE("round trip: fitted baseline → plan → fitted rewound motor, verdicts and hints") {
  const model::BenchModel base = model::DemoBench(5);
  const Plan plan = MakePlan(FitBench(base, 5));
  const double a29 = model::AwgWire(29)->Area();

  SUBCASE("wound as planned: matches") {
    model::BenchModel b = base;
    b.motor = Rewound(base.motor, 48, a29);
    const Verification v = VerifyRewind(plan, FitBench(b, 6));
    for (const ParamCheck& c : v.params) {
      CAPTURE(c.name);
      CAPTURE(c.z);
      if (c.decides) CHECK(c.verdict == "matches");
    }
    CHECK(v.verdict == "matches");
    CHECK(v.hints.empty());
  }
  SUBCASE("20 % fewer turns than planned: does not match, turn count off") {
    model::BenchModel b = base;
    b.motor = Rewound(base.motor, 0.8 * 48, a29);
    const Verification v = VerifyRewind(plan, FitBench(b, 7));
    CHECK(v.verdict == "does not match");
    REQUIRE_FALSE(v.hints.empty());
    CHECK(v.hints.front().cause == "turn count off");
  }
  SUBCASE("one coil open: does not match, one coil open") {
    model::BenchModel b = base;
    b.motor = Rewound(base.motor, 48, a29);
    const model::FaultSignature s =
        model::RingFaultSignature(3, b.commutator.brush_fraction, 1, {std::numeric_limits<double>::infinity(), 1.0});
    b.motor.R *= s.resistance_ratio;
    b.motor.Ke *= s.ke_ratio;
    const Verification v = VerifyRewind(plan, FitBench(b, 8));
    CHECK(v.verdict == "does not match");
    REQUIRE_FALSE(v.hints.empty());
    CHECK(v.hints.front().cause == "one coil open");
  }
}
