// rotorbench model: closed-form results of the motor model (double precision, SI).
//
// Valid where stated: most assume L = 0 (the electrical transient is over) and a
// constant supply. They serve as start values for the fitter, as checks of the
// integrator in tests, and as the quick answers in tables. Pure; thread-safe.
#pragma once

#include <complex>
#include <utility>

#include "model/params.h"

namespace rb::model {

/// Steady no-load (or fixed-load-torque) operating point at terminal voltage v.
struct SteadyPoint {
  double w = 0;  ///< speed [rad/s]; 0 when the motor cannot overcome friction
  double i = 0;  ///< current [A]
};

/// ω_ss = (Kt(V − Vb) − R·(Tc + T_load)) / (Kt·Ke + b·R), i_ss = (V − Vb − Ke·ω_ss)/R.
/// Assumes V > 0 and a torque load independent of speed.
SteadyPoint SteadyState(const MotorParams& p, double v, double load_torque_N_m = 0.0);

/// τm = J·R / (Kt·Ke + b·R) [s].
double MechanicalTimeConstant(const MotorParams& p);

/// Electrical time constant L/R [s].
double ElectricalTimeConstant(const MotorParams& p);

/// Speed after a voltage step from rest at t = 0 (L = 0, while ω > 0):
/// ω(t) = ω_ss·(1 − exp(−t/τm)).
double SpinUpSpeed(const MotorParams& p, double v, double t);

/// Open-circuit coast-down from ω0 at t = 0 (i = 0):
/// ω(t) = (ω0 + Tc/b)·exp(−b·t/J) − Tc/b, and 0 after the stop.
double CoastDownSpeed(const MotorParams& p, double w0, double t);

/// Time to stop in an open-circuit coast-down: (J/b)·ln(1 + b·ω0/Tc);
/// J·ω0/Tc when b = 0; +infinity when Tc = 0 (pure viscous decay never stops).
double CoastDownStopTime(const MotorParams& p, double w0);

/// Stall current (V − Vb)/R [A] and stall torque Kt·I_stall − Tc [N·m] (the torque at the
/// shaft as speed → 0+; friction is the Coulomb torque there).
double StallCurrent(const MotorParams& p, double v);
double StallTorque(const MotorParams& p, double v);

/// Roots of L·J·s² + (R·J + L·b)·s + (R·b + Kt·Ke) = 0 (the linear part of the model).
std::pair<std::complex<double>, std::complex<double>> CharacteristicRoots(const MotorParams& p);

}  // namespace rb::model
