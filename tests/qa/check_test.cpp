// Verdicts: the guard-band rule on its boundary cases, quantities measured from a fit
// against closed forms, and a motor's overall verdict.
#include "qa/check.h"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "model/params.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::qa;

namespace {

// A fit of the invented demo motor (model/demo.h) with relative standard uncertainty
// `rel` on every fitted parameter, uncorrelated; L held fixed at 0.
fit::FitSummary DemoFit(double rel = 0.005) {
  fit::FitSummary s;
  s.motor = "M-1";
  const double vals[] = {1.8, 0, 6.2e-3, 1.6e-6, 0.4e-3, 2e-7, 0.15};
  for (int i = 0; i < model::kNumParams; ++i) {
    const bool fitted = i != model::kL;
    s.params[static_cast<size_t>(i)] = {fitted, vals[i], rel * vals[i], rel * vals[i]};
    if (fitted) s.covariance(i, i) = std::pow(rel * vals[i], 2);
  }
  s.R20 = 1.8;
  s.R20_u = rel * 1.8;
  s.temperature_C = 20.0;
  return s;
}

Limit MakeLimit(SpecQuantity q, double voltage = 0) {
  Limit l;
  l.quantity = q;
  l.voltage = voltage;
  l.lower = 0;
  l.upper = 1e9;
  return l;
}

}  // namespace

TEST_CASE("guard band (ISO 14253-1 style): boundary cases with exact binary numbers") {
  // Specification zone [10, 20], U = 0.5. Conformance needs [y − U, y + U] inside the closed
  // zone; non-conformance needs it wholly outside; anything touching a limit is undecided.
  const auto gb = [](double y, double u) {
    return Decide(y, u, 10.0, 20.0, DecisionRule::kGuardBand).verdict;
  };
  CHECK(gb(15.0, 0.5) == Verdict::kPass);
  CHECK(gb(10.5, 0.5) == Verdict::kPass);  // y − U = LSL exactly: still inside
  CHECK(gb(19.5, 0.5) == Verdict::kPass);  // y + U = USL exactly
  CHECK(gb(10.25, 0.5) == Verdict::kInconclusive);
  CHECK(gb(10.0, 0.5) == Verdict::kInconclusive);  // on the limit
  CHECK(gb(9.75, 0.5) == Verdict::kInconclusive);
  CHECK(gb(9.5, 0.5) == Verdict::kInconclusive);  // y + U = LSL: touches the zone
  CHECK(gb(9.25, 0.5) == Verdict::kFail);
  CHECK(gb(20.5, 0.5) == Verdict::kInconclusive);  // y − U = USL
  CHECK(gb(20.75, 0.5) == Verdict::kFail);
  // U = 0: the guard band vanishes and the closed zone decides.
  CHECK(gb(10.0, 0.0) == Verdict::kPass);
  CHECK(gb(9.999, 0.0) == Verdict::kFail);
  // U wider than half the zone: conformance can never be proven.
  CHECK(gb(15.0, 6.0) == Verdict::kInconclusive);
  // One-sided limits.
  CHECK(Decide(19.5, 0.5, std::nullopt, 20.0, DecisionRule::kGuardBand).verdict == Verdict::kPass);
  CHECK(Decide(-1e9, 0.5, std::nullopt, 20.0, DecisionRule::kGuardBand).verdict == Verdict::kPass);
  CHECK(Decide(9.75, 0.5, 10.0, std::nullopt, DecisionRule::kGuardBand).verdict ==
        Verdict::kInconclusive);
  // Margin: distance to the nearest limit, negative outside.
  CHECK(Decide(12.0, 0.5, 10.0, 20.0, DecisionRule::kGuardBand).margin == 2.0);
  CHECK(Decide(21.0, 0.5, 10.0, 20.0, DecisionRule::kGuardBand).margin == -1.0);
  CHECK(Decide(NAN, 0.5, 10.0, 20.0, DecisionRule::kGuardBand).verdict == Verdict::kNotMeasured);
}

TEST_CASE("simple rule: inside the closed limits passes, whatever the uncertainty") {
  const auto s = [](double y) { return Decide(y, 0.5, 10.0, 20.0, DecisionRule::kSimple).verdict; };
  CHECK(s(10.25) == Verdict::kPass);  // inconclusive under the guard band
  CHECK(s(10.0) == Verdict::kPass);
  CHECK(s(20.0) == Verdict::kPass);
  CHECK(s(9.75) == Verdict::kFail);  // inconclusive under the guard band
  CHECK(s(20.25) == Verdict::kFail);
  CHECK(ParseRule("simple").value() == DecisionRule::kSimple);
  CHECK(ParseRule("guard-band").value() == DecisionRule::kGuardBand);
  CHECK(ParseRule("strict").status().message().find("--rule strict") == 0);
}

TEST_CASE("quantities from a fit against the steady-state closed forms (domain.md §1.1)") {
  const fit::FitSummary f = DemoFit(0.005);
  const double R = 1.8, Ke = 6.2e-3, Tc = 0.4e-3, b = 2e-7, Vb = 0.15, V = 6.0;
  // Kv = 1/Ke [rad/(V·s)]; 60/(2π·Ke) = 1540.2 rpm/V; relative uncertainty carries over.
  const Measurement kv = Measure(f, MakeLimit(SpecQuantity::kKv));
  REQUIRE(kv.available);
  CHECK(kv.value * 60.0 / (2 * std::numbers::pi) ==
        doctest::Approx(60.0 / (2 * std::numbers::pi * Ke)));
  CHECK(kv.u / kv.value == doctest::Approx(0.005));
  CHECK(Measure(f, MakeLimit(SpecQuantity::kKt)).value == Ke);
  // No-load: ω0 = (Kt(V − Vb) − R·Tc)/(Kt·Ke + b·R), I0 = (Tc + b·ω0)/Kt.
  const double w0 = (Ke * (V - Vb) - R * Tc) / (Ke * Ke + b * R);
  const Measurement nl = Measure(f, MakeLimit(SpecQuantity::kNoLoadSpeed, V));
  REQUIRE(nl.available);
  CHECK(nl.value == doctest::Approx(w0).epsilon(1e-9));
  CHECK(nl.u > 0);
  CHECK(Measure(f, MakeLimit(SpecQuantity::kNoLoadCurrent, V)).value ==
        doctest::Approx((Tc + b * w0) / Ke).epsilon(1e-9));
  // Stall: I = (V − Vb)/R, T = Kt·I − Tc.
  CHECK(Measure(f, MakeLimit(SpecQuantity::kStallCurrent, V)).value ==
        doctest::Approx((V - Vb) / R).epsilon(1e-9));
  CHECK(Measure(f, MakeLimit(SpecQuantity::kStallTorque, V)).value ==
        doctest::Approx(Ke * (V - Vb) / R - Tc).epsilon(1e-9));
  CHECK(Measure(f, MakeLimit(SpecQuantity::kFrictionTorque)).value == Tc);
  CHECK(Measure(f, MakeLimit(SpecQuantity::kR20)).value == 1.8);

  // Delta method, closed form: with only R uncertain, u(I_stall) = (V − Vb)/R² · u(R).
  fit::FitSummary only_r = DemoFit(0.0);
  only_r.covariance(model::kR, model::kR) = std::pow(0.018, 2);
  CHECK(Measure(only_r, MakeLimit(SpecQuantity::kStallCurrent, V)).u ==
        doctest::Approx((V - Vb) / (R * R) * 0.018).epsilon(1e-5));
}

TEST_CASE("quantities the fit does not give are 'not measured', and the motor inconclusive") {
  fit::FitSummary f = DemoFit();
  f.params[model::kJ].fitted = false;
  f.R20.reset();
  CHECK_FALSE(Measure(f, MakeLimit(SpecQuantity::kInertia)).available);
  const Measurement r20 = Measure(f, MakeLimit(SpecQuantity::kR20));
  CHECK_FALSE(r20.available);
  CHECK(r20.note.find("20 °C") != std::string::npos);
  Spec spec;
  spec.name = "t";
  spec.limits = {MakeLimit(SpecQuantity::kKt), MakeLimit(SpecQuantity::kInertia)};
  const MotorCheck c = CheckFit(f, spec, {});
  CHECK(c.items[0].verdict == Verdict::kPass);
  CHECK(c.items[1].verdict == Verdict::kNotMeasured);
  CHECK(c.overall == Verdict::kInconclusive);
}

TEST_CASE("a motor against the demo spec: pass, fail, and inconclusive from the uncertainty") {
  const Result<Spec> spec = LoadSpec(testing::Fixture("specs/demo-6v.toml"));
  REQUIRE(spec.ok());
  // The demo motor itself, measured to 0.5 %: every quantity conforms.
  const MotorCheck good = CheckFit(DemoFit(0.005), *spec, {});
  CHECK(good.overall == Verdict::kPass);
  for (const QuantityCheck& q : good.items) {
    CAPTURE(q.limit.Label());
    CHECK(q.verdict == Verdict::kPass);
  }
  // Ke 12 % low: Kv 12 % high, far outside ± 5 % → non-conformance proven.
  fit::FitSummary weak = DemoFit(0.005);
  weak.params[model::kKe].value *= 0.88;
  const MotorCheck bad = CheckFit(weak, *spec, {});
  CHECK(bad.overall == Verdict::kFail);
  CHECK(bad.Find(SpecQuantity::kKv, 0)->verdict == Verdict::kFail);
  // Ke 4.5 % low: Kv (1612.8) sits just inside its 1617 limit; a 1 % uncertainty (U = 2 %)
  // straddles the limit → inconclusive under the guard band, a pass under the simple rule.
  fit::FitSummary edge = DemoFit(0.01);
  edge.params[model::kKe].value *= 0.955;
  CHECK(CheckFit(edge, *spec, {}).Find(SpecQuantity::kKv, 0)->verdict == Verdict::kInconclusive);
  CheckOptions simple;
  simple.rule = DecisionRule::kSimple;
  CHECK(CheckFit(edge, *spec, simple).Find(SpecQuantity::kKv, 0)->verdict == Verdict::kPass);
}

TEST_CASE("guard band: a motor truly at the limit passes with probability Φ(−k) (simulated)") {
  // With y ~ N(true, u²) and U = k·u, a true value exactly at USL passes only when
  // y + U ≤ USL, i.e. when the error is ≤ −k·u: probability Φ(−k) = 0.02275 for k = 2
  // (normal distribution; JCGM 106 calls this the specific consumer's risk). The simple
  // rule passes such a motor half the time. 40 000 draws: binomial sd ≈ 0.00075.
  std::mt19937_64 rng(20261201);
  std::normal_distribution<double> noise(0.0, 1.0);
  const double usl = 20.0, u = 0.25;
  int pass_gb = 0, pass_simple = 0;
  const int draws = 40000;
  for (int i = 0; i < draws; ++i) {
    const double y = usl + u * noise(rng);
    pass_gb += Decide(y, 2 * u, 10.0, usl, DecisionRule::kGuardBand).verdict == Verdict::kPass;
    pass_simple += Decide(y, 2 * u, 10.0, usl, DecisionRule::kSimple).verdict == Verdict::kPass;
  }
  CHECK(std::fabs(pass_gb / double(draws) - 0.02275) < 4 * 0.00075);
  CHECK(std::fabs(pass_simple / double(draws) - 0.5) < 4 * 0.0025);
}
