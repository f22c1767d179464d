// Rewind prediction: the scaling laws (domain.md §3.1), uncertainty propagation checked
// by Monte Carlo, the rule of thumb over the wire catalogue, and the slot-fill verdicts.
#include <doctest/doctest.h>

#include <Eigen/Cholesky>

#include <cmath>
#include <numbers>
#include <random>

#include "model/commutator.h"
#include "model/demo.h"
#include "model/units.h"
#include "rewind/rewind.h"

using namespace rb;
using namespace rb::rewind;

namespace {

/// The demo motor as a baseline with a plausible fit covariance (relative 1σ: R 1 %,
/// Ke 0.5 %, Tc 5 %, b 20 %, J 3 %, Vb 10 %; R and Ke correlated +0.5).
Baseline DemoBaseline() {
  Baseline b;
  b.source = "test";
  b.estimate.value = model::DemoMotor();
  const model::MotorParams& p = b.estimate.value;
  const double rel[model::kNumParams] = {0.01, 0, 0.005, 0.03, 0.05, 0.2, 0.1};
  for (int i = 0; i < model::kNumParams; ++i) {
    b.estimate.cov(i, i) = std::pow(rel[i] * model::Get(p, i), 2);
  }
  b.estimate.cov(model::kR, model::kKe) = b.estimate.cov(model::kKe, model::kR) =
      0.5 * 0.01 * p.R * 0.005 * p.Ke;
  b.r_at_20C = true;
  return b;
}

model::Winding W(const char* spec) { return *model::ParseWinding(spec); }

PlanOptions At(double v) {
  PlanOptions o;
  o.voltage = v;
  return o;
}

}  // namespace

TEST_CASE("scaling: Ke ∝ turns, R ∝ turns/area, L ∝ turns², mechanics unchanged") {
  const Baseline b = DemoBaseline();
  const Prediction p = *PredictRewind(b, W("60xAWG30"), W("36xAWG27"), At(6.0));
  const model::MotorParams& o = b.estimate.value;
  const model::MotorParams& n = p.predicted.value;
  const double a30 = model::AwgWire(30)->Area(), a27 = model::AwgWire(27)->Area();
  CHECK(n.Ke == doctest::Approx(o.Ke * 36 / 60));
  CHECK(n.R == doctest::Approx(o.R * (36.0 / 60) * (a30 / a27)));
  CHECK(n.L == doctest::Approx(o.L * std::pow(36.0 / 60, 2)));
  CHECK(n.J == o.J);
  CHECK(n.Tc == o.Tc);
  CHECK(n.b == o.b);
  CHECK(n.Vb == o.Vb);
}

TEST_CASE("same slot fill (wire area ∝ 1/N): R ∝ N², speed ∝ 1/N, stall current ∝ 1/N², "
          "stall torque ∝ 1/N, peak power ∝ 1/N², Km unchanged (domain.md §3.1)") {
  // Friction and brush drop off so that the ideal relations hold exactly.
  Baseline b = DemoBaseline();
  b.estimate.value.Tc = 0;
  b.estimate.value.b = 0;
  b.estimate.value.Vb = 0;
  // Halving the turns with √2 the diameter keeps the copper area per coil.
  const model::Winding old_w = W("60x0.300mm");
  model::Winding new_w = old_w;
  new_w.turns = 30;
  new_w.wire = *model::MetricWire(0.300e-3 * std::sqrt(2.0));
  const Prediction p = *PredictRewind(b, old_w, new_w, At(6.0));
  const double k = 0.5;  // N_new/N_old
  const model::Characteristics& c0 = p.baseline_char.nominal;
  const model::Characteristics& c1 = p.predicted_char.nominal;
  CHECK(p.predicted.value.R == doctest::Approx(b.estimate.value.R * k * k));
  CHECK(c1.no_load_speed == doctest::Approx(c0.no_load_speed / k));
  CHECK(c1.stall_current == doctest::Approx(c0.stall_current / (k * k)));
  CHECK(c1.stall_torque == doctest::Approx(c0.stall_torque / k));
  CHECK(c1.max_power.power_out == doctest::Approx(c0.max_power.power_out / (k * k)));
  CHECK(c1.motor_constant == doctest::Approx(c0.motor_constant));
  // V²/(4R) with no friction (domain.md §2.4).
  CHECK(c1.max_power.power_out == doctest::Approx(36.0 / (4 * p.predicted.value.R)));
}

TEST_CASE("resistance from first principles when the armature is measured") {
  // a = 20 mm, b = 4 mm, c = 3 mm: MLT 57.42 mm (domain.md §3.2). 60 turns of AWG 30 at the
  // NEMA 103.7 Ω/1000 ft, brush-to-brush through a 3-segment ring averaged over rotation
  // with brushes 0.2 of a pitch wide: (1 − 2β)·2/3 + 2β·1/2 of one coil (commutator test).
  PlanOptions o = At(6.0);
  o.dims.stack_length = 20e-3;
  o.dims.tooth_width = 4e-3;
  o.dims.build_depth = 3e-3;
  const Prediction p = *PredictRewind(DemoBaseline(), W("60xAWG30"), W("60xAWG30"), o);
  const double rc = units::OhmPer1000FtToOhmPerMetre(103.7) * 60 * 57.42e-3;
  REQUIRE(p.r_geometry_old);
  CHECK(*p.r_geometry_old == doctest::Approx(rc * (0.6 * 2.0 / 3 + 0.4 * 0.5)).epsilon(2e-3));
  CHECK(p.mlt_ratio == doctest::Approx(1.0));
  // A fuller winding lengthens the mean turn: MLT grows with the build depth.
  const Prediction q = *PredictRewind(DemoBaseline(), W("60xAWG30"), W("60xAWG29"), o);
  CHECK(q.mlt_ratio > 1.0);
  CHECK(q.mlt_ratio == doctest::Approx((2 * 24e-3 + std::numbers::pi * 3e-3 * q.fill.ratio) / 57.42e-3).epsilon(1e-3));
}

TEST_CASE("uncertainty of the prediction agrees with a Monte Carlo of baseline and winding") {
  // Simulated truth: draw the baseline from its covariance (multivariate normal), the turn
  // counts as ±1 turn (uniform integer offsets −1, 0, +1 would not be rectangular, so draw
  // a continuous rectangular ±1) and the bare diameters uniform within the limits, then
  // scale. Model terms are switched off so the two computations see the same inputs.
  const Baseline b = DemoBaseline();
  PlanOptions o = At(6.0);
  o.r_model_u = 0;
  o.ke_model_u = 0;
  o.build_fraction_of_mlt = 0;
  const model::Winding ow = W("60xAWG30"), nw = W("45xAWG28");
  const Prediction p = *PredictRewind(b, ow, nw, o);

  std::mt19937_64 rng(42);
  std::normal_distribution<double> g;
  std::uniform_real_distribution<double> u(-1, 1);
  const Eigen::Matrix<double, model::kNumParams, model::kNumParams> l =
      (b.estimate.cov + 1e-30 * Eigen::Matrix<double, 7, 7>::Identity()).llt().matrixL();
  const int n = 40000;
  double s_r = 0, s_r2 = 0, s_k = 0, s_k2 = 0, s_w = 0, s_w2 = 0;
  for (int i = 0; i < n; ++i) {
    Eigen::Matrix<double, 7, 1> z;
    for (int j = 0; j < 7; ++j) z(j) = g(rng);
    const Eigen::Matrix<double, 7, 1> d = l * z;
    model::MotorParams q = b.estimate.value;
    for (int j = 0; j < 7; ++j) model::Set(&q, j, model::Get(q, j) + d(j));
    const double n_old = 60 + u(rng), n_new = 45 + u(rng);
    const double d_old = ow.wire.d_nom + 0.5 * (ow.wire.d_max - ow.wire.d_min) * u(rng);
    const double d_new = nw.wire.d_nom + 0.5 * (nw.wire.d_max - nw.wire.d_min) * u(rng);
    q.R *= (n_new / n_old) * (d_old * d_old) / (d_new * d_new);
    q.Ke *= n_new / n_old;
    const double w0 = model::ComputeCharacteristics(q, 6.0).no_load_speed;
    s_r += q.R; s_r2 += q.R * q.R;
    s_k += q.Ke; s_k2 += q.Ke * q.Ke;
    s_w += w0; s_w2 += w0 * w0;
  }
  auto sd = [n](double s, double s2) { return std::sqrt((s2 - s * s / n) / (n - 1)); };
  // 40000 draws: the sample SD is good to about 0.4 %; the delta method is first order.
  CHECK(std::sqrt(p.predicted.cov(model::kR, model::kR)) == doctest::Approx(sd(s_r, s_r2)).epsilon(0.03));
  CHECK(std::sqrt(p.predicted.cov(model::kKe, model::kKe)) == doctest::Approx(sd(s_k, s_k2)).epsilon(0.03));
  CHECK(p.predicted_char.u(model::kNoLoadSpeed) == doctest::Approx(sd(s_w, s_w2)).epsilon(0.03));
  CHECK(p.predicted.value.R == doctest::Approx(s_r / n).epsilon(2e-3));
}

TEST_CASE("rule of thumb over the catalogue: fewer turns of thicker wire → faster, more "
          "current, less torque per amp (common practice, no source)") {
  const Baseline b = DemoBaseline();
  const model::Winding old_w = W("60xAWG30");
  const std::vector<model::Wire> wires = model::WireCatalogue();
  struct Case {
    int turns;
    double d;
    model::Characteristics c;
    double kt;
  };
  std::vector<Case> cases;
  for (int turns : {20, 35, 50, 65, 80, 100}) {
    for (const model::Wire& wire : wires) {
      model::Winding w = old_w;
      w.turns = turns;
      w.wire = wire;
      const Prediction p = *PredictRewind(b, old_w, w, At(6.0));
      cases.push_back({turns, wire.d_nom, p.predicted_char.nominal, p.predicted.value.Kt()});
    }
  }
  int pairs = 0;
  for (const Case& a : cases) {
    for (const Case& z : cases) {
      if (!(z.turns < a.turns && z.d > a.d)) continue;
      ++pairs;
      CHECK(z.c.no_load_speed > a.c.no_load_speed);
      CHECK(z.c.stall_current > a.c.stall_current);
      CHECK(z.c.no_load_current > a.c.no_load_current);
      CHECK(z.kt < a.kt);
    }
  }
  CHECK(pairs > 10000);
}

TEST_CASE("slot fill: verdicts and numbers against the stated thresholds") {
  const model::ArmatureDims none;
  FillCheck f = CheckFill(W("60xAWG30"), W("60xAWG30"), none);
  CHECK(f.ratio == doctest::Approx(1.0));
  CHECK(f.verdict == FillVerdict::kFits);
  // 60 turns → 36 turns three gauges up: 36·od27² / (60·od30²) ≈ 1.15 with heavy build.
  f = CheckFill(W("60xAWG30"), W("36xAWG27"), none);
  const double od27 = model::AwgWire(27)->od_nom, od30 = model::AwgWire(30)->od_nom;
  CHECK(f.ratio == doctest::Approx(36 * od27 * od27 / (60 * od30 * od30)));
  CHECK(f.verdict == (f.ratio <= 1.0 ? FillVerdict::kFits
                      : f.ratio <= 1.1 ? FillVerdict::kTight : FillVerdict::kWillNotFit));
  CHECK(f.reason.find("%") != std::string::npos);
  // One gauge up at the same turns: ≈ 1.2–1.26× the footprint → will not fit.
  CHECK(CheckFill(W("60xAWG30"), W("60xAWG29"), none).verdict == FillVerdict::kWillNotFit);
  // 5 % more turns of the same wire → tight.
  CHECK(CheckFill(W("60xAWG30"), W("63xAWG30"), none).verdict == FillVerdict::kTight);
  // Heavy → single build at the same copper frees space.
  CHECK(CheckFill(W("60xAWG30"), W("60xAWG30:single"), none).verdict == FillVerdict::kFits);

  // With the slot area: copper per half slot against 0.40 / 0.50.
  model::ArmatureDims d;
  const model::Winding w = W("60xAWG30");
  d.slot_area = 2 * w.CopperArea() / 0.35;  // old fill 35 %
  f = CheckFill(w, w, d);
  REQUIRE(f.new_copper_fill);
  CHECK(*f.new_copper_fill == doctest::Approx(0.35));
  CHECK(f.verdict == FillVerdict::kFits);
  d.slot_area = 2 * w.CopperArea() / 0.45;
  CHECK(CheckFill(w, w, d).verdict == FillVerdict::kTight);
  d.slot_area = 2 * w.CopperArea() / 0.55;
  CHECK(CheckFill(w, w, d).verdict == FillVerdict::kWillNotFit);
}

TEST_CASE("prediction refuses what it cannot scale") {
  const Baseline b = DemoBaseline();
  model::Winding five = W("60xAWG30");
  five.coils = 5;
  CHECK_FALSE(PredictRewind(b, W("60xAWG30"), five, At(6.0)).ok());
  CHECK_FALSE(PredictRewind(b, W("60xAWG30"), W("36xAWG27"), At(NAN)).ok());
  Baseline zero;
  CHECK_FALSE(PredictRewind(zero, W("60xAWG30"), W("36xAWG27"), At(6.0)).ok());
}

TEST_CASE("nameplate baseline: Tc from the no-load current, tolerance as uncertainty") {
  Nameplate n;
  n.R = 2.0;
  n.Ke = units::KvRpmPerVoltToKe(1500);
  n.no_load_current = 0.1;
  n.voltage = 6;
  const Baseline b = *BaselineFromNameplate(n);
  CHECK(b.estimate.value.Tc == doctest::Approx(n.Ke * 0.1));
  CHECK(std::sqrt(b.estimate.cov(model::kR, model::kR)) == doctest::Approx(0.2));
  // The no-load current of the model reproduces the nameplate's at its voltage.
  CHECK(model::ComputeCharacteristics(b.estimate.value, 6.0).no_load_current == doctest::Approx(0.1));
  n.R = NAN;
  CHECK_FALSE(BaselineFromNameplate(n).ok());
}
