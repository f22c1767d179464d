// The ODE (templated RK4 in dynamics.h, and the bench simulator's own integrator)
// against the closed forms, which are exact solutions of the same equations.
#include <doctest/doctest.h>

#include <cmath>

#include "model/model.h"

using namespace rb::model;

namespace {
MotorParams WorkedCase() {  // domain.md §1.1
  MotorParams p;
  p.R = 2.0;
  p.Ke = 0.01;
  p.J = 2e-6;
  p.b = 1e-7;
  p.Tc = 1e-4;
  return p;
}

/// A bench with ideal instruments: no commutator effect, no source resistance, no noise.
BenchModel IdealBench(const MotorParams& p) {
  BenchModel m;
  m.motor = p;
  m.commutator.segments = 0;
  m.supply.internal_resistance_ohm = 0;
  m.instruments.current = {.lsb = 1e-9, .full_scale = 100};
  m.instruments.voltage = {.lsb = 1e-9, .full_scale = 100};
  m.instruments.adc_rate_hz = 1000;
  return m;
}
}  // namespace

TEST_CASE("templated RK4 (quasi-static current) matches the closed-form spin-up") {
  const MotorParams p = WorkedCase();
  const ParamsT<double> pt = ToParamsT(p);
  const Smoothing s{.speed_rad_s = 1e-3, .current_A = 1e-6};
  double w = 0;
  const double dt = 1e-5;  // the smoothed friction makes the first step first-order
  int steps = 0;
  for (double target : {0.01, 0.04, 0.1}) {
    while ((steps + 1) * dt <= target + 1e-12) {
      auto f = [&](double x) { return SpeedDerivativeQuasiStatic(pt, 6.0, x, 0.0, s); };
      const double k1 = f(w), k2 = f(w + dt / 2 * k1), k3 = f(w + dt / 2 * k2), k4 = f(w + dt * k3);
      w += dt / 6 * (k1 + 2 * k2 + 2 * k3 + k4);
      ++steps;
    }
    CHECK(w == doctest::Approx(SpinUpSpeed(p, 6.0, target)).epsilon(1e-6));
  }
}

TEST_CASE("templated RK4 (i, ω) with L > 0 matches the exact two-pole step response") {
  MotorParams p = WorkedCase();
  p.L = 1e-3;  // poles −25.371 and −1974.68 s⁻¹ (domain.md §1.1)
  const ParamsT<double> pt = ToParamsT(p);
  const Smoothing s{.speed_rad_s = 1e-4, .current_A = 1e-6};
  auto [r1, r2] = CharacteristicRoots(p);
  const double p1 = r1.real(), p2 = r2.real(), V = 6.0, LJ = p.L * p.J;
  // Linear system, zero initial state, step inputs V and Tc (friction engages at 0+).
  // Partial fractions of Ω(s) = (Kt·V − (L·s + R)·Tc) / (s·L·J·(s − p1)(s − p2)):
  const double a0 = (p.Kt() * V - p.R * p.Tc) / (LJ * p1 * p2);
  const double a1 = (p.Kt() * V - (p.L * p1 + p.R) * p.Tc) / (LJ * p1 * (p1 - p2));
  const double a2 = (p.Kt() * V - (p.L * p2 + p.R) * p.Tc) / (LJ * p2 * (p2 - p1));
  CHECK(a0 == doctest::Approx(SteadyState(p, V).w));
  CHECK(a0 + a1 + a2 == doctest::Approx(0.0).scale(1.0));
  auto exact = [&](double t) { return a0 + a1 * std::exp(p1 * t) + a2 * std::exp(p2 * t); };
  StateT<double> x{0, 0};
  const double dt = 1e-6;
  int k = 0;
  for (double target : {0.002, 0.01, 0.05, 0.1}) {
    for (; (k + 1) * dt <= target + 1e-12; ++k) {
      x = Rk4Step(pt, Drive::kConnected, 6.0, x, 0.0, dt, s);
    }
    CHECK(x.w == doctest::Approx(exact(target)).epsilon(1e-5));
  }
}

TEST_CASE("QuasiStaticCurrent solves R·i + Vb·tanh(i/w) = e") {
  ParamsT<double> p{2.0, 0, 0.01, 1e-6, 0, 0, 0.4};
  const Smoothing s;
  for (double e : {-3.0, -0.41, 0.0, 0.2, 0.41, 1.0, 12.0}) {
    const double i = QuasiStaticCurrent(p, e, s);
    CHECK(p.R * i + p.Vb * std::tanh(i / s.current_A) == doctest::Approx(e).epsilon(1e-12));
  }
}

TEST_CASE("bench simulator truth follows the closed-form spin-up and coast-down") {
  const MotorParams p = WorkedCase();
  const BenchModel bench = IdealBench(p);
  BenchSimulator sim(bench);
  Observations obs;
  obs.record_truth = true;
  sim.SetSupplyVolts(6.0);
  sim.SetDrive(Drive::kConnected);
  sim.AdvanceTo(0.3, &obs);
  for (const TrueState& x : obs.truth) {
    if (x.t > 0) CHECK(x.w == doctest::Approx(SpinUpSpeed(p, 6.0, x.t)).epsilon(1e-5));
  }
  const double w0 = sim.truth().w;
  obs.truth.clear();
  sim.SetDrive(Drive::kOpenCircuit);
  const double t0 = sim.truth().t;
  sim.AdvanceTo(t0 + 10.0, &obs);
  for (const TrueState& x : obs.truth) {
    const double expect = CoastDownSpeed(p, w0, x.t - t0);
    CHECK(x.w == doctest::Approx(expect).epsilon(1e-5).scale(1.0));
    // Open circuit: the terminal voltage is the back-EMF.
    CHECK(x.v_terminal == doctest::Approx(p.Ke * x.w).scale(1.0));
  }
  CHECK(sim.truth().w == 0.0);  // stopped, and friction does not reverse it
}

TEST_CASE("bench simulator locked-rotor current rises as V/R·(1 − exp(−t·R/L))") {
  MotorParams p = WorkedCase();
  p.L = 1e-3;
  const BenchModel bench = IdealBench(p);
  BenchSimulator sim(bench);
  Observations obs;
  obs.record_truth = true;
  sim.SetDrive(Drive::kLocked);
  sim.SetSupplyVolts(6.0);
  sim.AdvanceTo(0.005, &obs);
  for (const TrueState& x : obs.truth) {
    const double expect = 6.0 / p.R * (1.0 - std::exp(-x.t * p.R / p.L));
    CHECK(x.i == doctest::Approx(expect).epsilon(1e-6).scale(1.0));
  }
}
