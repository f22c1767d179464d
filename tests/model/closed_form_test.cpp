// Closed forms against the synthetic worked case of domain.md §1.1 (recomputed there from
// the model equations, not from a publication) and the IEC 60028 copper law.
#include <doctest/doctest.h>

#include "model/model.h"

using namespace rb::model;

namespace {
MotorParams WorkedCase() {  // domain.md §1.1: R 2 Ω, Ke 0.01, J 2e-6, b 1e-7, Tc 1e-4
  MotorParams p;
  p.R = 2.0;
  p.Ke = 0.01;
  p.J = 2e-6;
  p.b = 1e-7;
  p.Tc = 1e-4;
  return p;
}
}  // namespace

TEST_CASE("steady state and time constant of the worked case (domain.md §1.1)") {
  const MotorParams p = WorkedCase();
  CHECK(MechanicalTimeConstant(p) == doctest::Approx(0.0399202).epsilon(2e-6));
  const SteadyPoint sp = SteadyState(p, 6.0);
  CHECK(sp.w == doctest::Approx(596.806).epsilon(1e-6));
  CHECK(rb::units::RadPerSecToRpm(sp.w) == doctest::Approx(5699.08).epsilon(1e-6));
  CHECK(sp.i == doctest::Approx(0.015968).epsilon(5e-5));
  CHECK(StallCurrent(p, 6.0) == doctest::Approx(3.0));  // i(0+) = V/R
  CHECK(StallTorque(p, 6.0) == doctest::Approx(0.01 * 3.0 - 1e-4));
}

TEST_CASE("spin-up ω(t) of the worked case (domain.md §1.1)") {
  const MotorParams p = WorkedCase();
  CHECK(SpinUpSpeed(p, 6.0, 0.01) == doctest::Approx(132.245).epsilon(4e-6));
  CHECK(SpinUpSpeed(p, 6.0, 0.04) == doctest::Approx(377.692).epsilon(2e-6));
  CHECK(SpinUpSpeed(p, 6.0, 0.1) == doctest::Approx(548.062).epsilon(1e-6));
}

TEST_CASE("open-circuit coast-down of the worked case (domain.md §1.1)") {
  const MotorParams p = WorkedCase();
  const double w0 = SteadyState(p, 6.0).w;
  CHECK(CoastDownSpeed(p, w0, 1.0) == doctest::Approx(518.929).epsilon(1e-6));
  CHECK(CoastDownSpeed(p, w0, 5.0) == doctest::Approx(243.594).epsilon(2e-6));
  CHECK(CoastDownStopTime(p, w0) == doctest::Approx(9.36011).epsilon(1e-6));
  CHECK(CoastDownSpeed(p, w0, 9.5) == 0.0);
  // Limits stated in domain.md §1.1: pure Coulomb stops at J·ω0/Tc; pure viscous never.
  MotorParams coulomb = p;
  coulomb.b = 0;
  CHECK(CoastDownStopTime(coulomb, 100.0) == doctest::Approx(2e-6 * 100.0 / 1e-4));
  MotorParams viscous = p;
  viscous.Tc = 0;
  CHECK(std::isinf(CoastDownStopTime(viscous, 100.0)));
}

TEST_CASE("characteristic roots with L = 1 mH (domain.md §1.1: −25.371 and −1974.68 s⁻¹)") {
  MotorParams p = WorkedCase();
  p.L = 1e-3;
  auto [a, b] = CharacteristicRoots(p);
  const double slow = std::max(a.real(), b.real()), fast = std::min(a.real(), b.real());
  CHECK(slow == doctest::Approx(-25.371).epsilon(2e-5));
  CHECK(fast == doctest::Approx(-1974.68).epsilon(3e-6));
  CHECK(ElectricalTimeConstant(p) == doctest::Approx(0.5e-3));
}

TEST_CASE("copper resistance vs temperature (IEC 60028: α20 = 0.00393 /K)") {
  CHECK(CopperResistanceAt(1.0, 20.0) == 1.0);
  CHECK(CopperResistanceAt(1.0, 30.0) == doctest::Approx(1.0393));
  CHECK(CopperResistanceTo20C(1.0393, 30.0) == doctest::Approx(1.0));
  CHECK(CopperTemperatureFromResistance(1.0393, 1.0) == doctest::Approx(30.0));
  CHECK(kCopperResistivity20 == doctest::Approx(0.017241e-6).epsilon(1e-5));  // Ω·m
}
