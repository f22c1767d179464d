#include "model/closed_form.h"

#include <cmath>
#include <limits>

namespace rb::model {

SteadyPoint SteadyState(const MotorParams& p, double v, double load_torque_N_m) {
  const double drive = p.Kt() * (v - p.Vb) - p.R * (p.Tc + load_torque_N_m);
  SteadyPoint sp;
  if (drive <= 0) {  // cannot break away: stalled, full current
    sp.w = 0;
    sp.i = std::max(0.0, (v - p.Vb) / p.R);
    return sp;
  }
  sp.w = drive / (p.Kt() * p.Ke + p.b * p.R);
  sp.i = (v - p.Vb - p.Ke * sp.w) / p.R;
  return sp;
}

double MechanicalTimeConstant(const MotorParams& p) {
  return p.J * p.R / (p.Kt() * p.Ke + p.b * p.R);
}

double ElectricalTimeConstant(const MotorParams& p) { return p.L / p.R; }

double SpinUpSpeed(const MotorParams& p, double v, double t) {
  if (t <= 0) return 0.0;
  const SteadyPoint sp = SteadyState(p, v);
  return sp.w * (1.0 - std::exp(-t / MechanicalTimeConstant(p)));
}

double CoastDownSpeed(const MotorParams& p, double w0, double t) {
  if (t <= 0) return w0;
  if (t >= CoastDownStopTime(p, w0)) return 0.0;
  if (p.b == 0) return w0 - p.Tc * t / p.J;
  const double q = p.Tc / p.b;
  return (w0 + q) * std::exp(-p.b * t / p.J) - q;
}

double CoastDownStopTime(const MotorParams& p, double w0) {
  if (w0 <= 0) return 0.0;
  if (p.Tc <= 0) return std::numeric_limits<double>::infinity();
  if (p.b == 0) return p.J * w0 / p.Tc;
  return p.J / p.b * std::log1p(p.b * w0 / p.Tc);
}

double StallCurrent(const MotorParams& p, double v) { return (v - p.Vb) / p.R; }

double StallTorque(const MotorParams& p, double v) {
  return std::max(0.0, p.Kt() * StallCurrent(p, v) - p.Tc);
}

std::pair<std::complex<double>, std::complex<double>> CharacteristicRoots(const MotorParams& p) {
  const double a = p.L * p.J, b = p.R * p.J + p.L * p.b, c = p.R * p.b + p.Kt() * p.Ke;
  if (a == 0) return {std::complex<double>(-c / b, 0), std::complex<double>(-INFINITY, 0)};
  const std::complex<double> disc = std::sqrt(std::complex<double>(b * b - 4 * a * c, 0));
  // Numerically stable pairing (avoid cancellation in −b + √disc).
  const std::complex<double> q = -0.5 * (b + (b >= 0 ? disc : -disc));
  return {c / q, q / a};
}

}  // namespace rb::model
