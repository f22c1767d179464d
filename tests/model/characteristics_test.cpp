// Derived characteristics against the textbook relations of domain.md §2.4 (the
// constant-loss-current model: b = 0, Vb = 0, so I0 = Tc/Kt) and numerical checks.
#include <doctest/doctest.h>

#include <cmath>

#include "model/model.h"

using namespace rb::model;

TEST_CASE("η_max = (1 − √(I0/Is))² at I = √(I0·Is); I0 = 0.1 A, Is = 10 A → 0.81 at 1.0 A "
          "(textbook relation, domain.md §2.4 check value)") {
  MotorParams p;
  p.R = 1.2;          // Is = V/R = 10 A at 12 V
  p.Ke = 0.02;
  p.Tc = 0.1 * 0.02;  // I0 = Tc/Kt = 0.1 A
  p.J = 1e-5;
  const Characteristics c = ComputeCharacteristics(p, 12.0);
  CHECK(c.stall_current == doctest::Approx(10.0));
  CHECK(c.no_load_current == doctest::Approx(0.1));
  CHECK(c.max_efficiency.efficiency == doctest::Approx(0.81).epsilon(1e-9));
  CHECK(c.max_efficiency.current == doctest::Approx(1.0).epsilon(1e-6));
}

TEST_CASE("P_max = (V − I0·R)²/(4R): 606.80 W with I0 = 0, 575.95 W with I0 = 1.25 A "
          "(V = 50 V, R = 1.03 Ω; domain.md §2.4 check values)") {
  MotorParams p;
  p.R = 1.03;
  p.Ke = 0.2215;
  p.J = 1e-3;
  Characteristics c = ComputeCharacteristics(p, 50.0);
  CHECK(c.max_power.power_out == doctest::Approx(606.80).epsilon(1e-5));
  CHECK(c.max_power.speed == doctest::Approx(0.5 * c.no_load_speed));
  p.Tc = 1.25 * p.Ke;
  c = ComputeCharacteristics(p, 50.0);
  CHECK(c.max_power.power_out == doctest::Approx(575.95).epsilon(1e-5));
  CHECK(c.max_power.current == doctest::Approx(0.5 * (c.stall_current + 1.25)));
}

TEST_CASE("operating points satisfy both steady-state equations, with viscous friction "
          "and brush drop") {
  const MotorParams p = DemoMotor();
  for (double t : {0.0, 1e-3, 5e-3, 1e-2}) {
    const OperatingPoint op = PointAtTorque(p, 6.0, t);
    if (op.speed <= 0) continue;
    CHECK(6.0 - p.Vb == doctest::Approx(p.R * op.current + p.Ke * op.speed));
    CHECK(p.Kt() * op.current == doctest::Approx(op.torque + p.Tc + p.b * op.speed));
  }
  const Characteristics c = ComputeCharacteristics(p, 6.0);
  // The no-load point is the closed-form steady state.
  CHECK(c.no_load_speed == doctest::Approx(SteadyState(p, 6.0).w));
  // Efficiency at the maximum is not beaten anywhere on a fine grid.
  for (const OperatingPoint& op : TorqueSpeedCurve(p, 6.0, 2001)) {
    CHECK(op.efficiency <= c.max_efficiency.efficiency + 1e-12);
  }
}

TEST_CASE("delta method: 1/Ke has the relative uncertainty of Ke, and stall current V/R "
          "that of R (first-order propagation, GUM JCGM 100:2008 §5.1.2)") {
  MotorEstimate e;
  e.value = DemoMotor();
  e.cov(kKe, kKe) = std::pow(0.01 * e.value.Ke, 2);  // 1 % on Ke
  e.cov(kR, kR) = std::pow(0.02 * e.value.R, 2);     // 2 % on R
  e.cov(kR, kKe) = e.cov(kKe, kR) = 0.3 * 0.01 * e.value.Ke * 0.02 * e.value.R;
  const double u_kv = DeltaMethodU(e, [](const MotorParams& p) { return 1.0 / p.Ke; });
  CHECK(u_kv * e.value.Ke == doctest::Approx(0.01).epsilon(1e-6));
  // Stall current V/R: relative u equals relative u(R) to first order.
  const CharacteristicsU cu = ComputeCharacteristicsU(e, 6.0);
  const Uncertain is = cu.Get(kStallCurrent);
  CHECK(is.u / is.value == doctest::Approx(0.02).epsilon(1e-4));
}
