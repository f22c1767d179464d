// rotorbench model: the motor's differential equations, templated on the scalar type.
//
// T is double for simulation, or an automatic-differentiation number (e.g. a Ceres Jet)
// for the fitter; everything here uses only arithmetic, tanh, exp and sqrt found by
// argument-dependent lookup. Signs of current and speed are smoothed (tanh with a
// stated width) so that derivatives exist; the simulator uses the exact, non-smooth
// friction in model/simulate.cpp. SI units. Pure functions; thread-safe.
#pragma once

#include <cmath>

#include "model/params.h"

namespace rb::model {

/// The parameter set with the scalar type of the caller.
template <typename T>
struct ParamsT {
  T R, L, Ke, J, Tc, b, Vb;
};

inline ParamsT<double> ToParamsT(const MotorParams& p) {
  return {p.R, p.L, p.Ke, p.J, p.Tc, p.b, p.Vb};
}

/// Widths of the smooth sign functions: sgn(x) ≈ tanh(x / width).
struct Smoothing {
  double speed_rad_s = 0.5;  ///< friction sign; well below any speed a tach resolves
  double current_A = 0.005;  ///< brush-drop sign; the linear region of a carbon brush
};

/// How the motor is connected during a stretch of a run.
enum class Drive {
  kConnected,    ///< terminals driven by a source (terminal voltage known)
  kOpenCircuit,  ///< terminals open: i = 0, terminal voltage = Ke·ω
  kLocked,       ///< shaft held: ω = 0
};

/// The real part of a scalar (itself for double; `.a` for a Jet).
template <typename T>
double ScalarPart(const T& x) {
  if constexpr (requires { x.a; }) {
    return x.a;
  } else {
    return static_cast<double>(x);
  }
}

template <typename T>
T SmoothSign(const T& x, double width) {
  using std::tanh;
  return tanh(x / width);
}

/// di/dt of a connected motor (requires L > 0).
template <typename T>
T CurrentDerivative(const ParamsT<T>& p, const T& v_term, const T& i, const T& w,
                    const Smoothing& s) {
  return (v_term - p.R * i - p.Ke * w - p.Vb * SmoothSign(i, s.current_A)) / p.L;
}

/// dω/dt given the armature current and the load torque.
template <typename T>
T SpeedDerivative(const ParamsT<T>& p, const T& i, const T& w, const T& t_load,
                  const Smoothing& s) {
  return (p.Ke * i - p.Tc * SmoothSign(w, s.speed_rad_s) - p.b * w - t_load) / p.J;
}

/// Armature current when L is neglected: the root of R·i + Vb·tanh(i/w_i) = e, where
/// e = v_term − Ke·ω. The left side increases monotonically, so the root is unique and
/// lies in [(e−Vb)/R, (e+Vb)/R]; it is found on the real parts by safeguarded Newton,
/// then two Newton steps in T carry the derivatives (implicit-function theorem).
template <typename T>
T QuasiStaticCurrent(const ParamsT<T>& p, const T& e, const Smoothing& s) {
  using std::tanh;
  if (ScalarPart(p.Vb) == 0.0) return e / p.R;
  const double R = ScalarPart(p.R), Vb = ScalarPart(p.Vb), E = ScalarPart(e);
  const double wi = s.current_A;
  double lo = (E - std::fabs(Vb)) / R, hi = (E + std::fabs(Vb)) / R;
  double x = 0.5 * (lo + hi);
  for (int k = 0; k < 60; ++k) {
    const double th = std::tanh(x / wi);
    const double f = R * x + Vb * th - E;
    if (f > 0) hi = x; else lo = x;
    const double df = R + Vb / wi * (1 - th * th);
    double next = x - f / df;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::fabs(next - x) <= 1e-15 * (1 + std::fabs(x))) { x = next; break; }
    x = next;
  }
  T i = T(x);
  for (int k = 0; k < 2; ++k) {
    const T th = tanh(i / wi);
    i = i - (p.R * i + p.Vb * th - e) / (p.R + p.Vb / wi * (1.0 - th * th));
  }
  return i;
}

/// dω/dt of a connected motor with L neglected, driven by terminal voltage v_term.
template <typename T>
T SpeedDerivativeQuasiStatic(const ParamsT<T>& p, const T& v_term, const T& w, const T& t_load,
                             const Smoothing& s) {
  const T i = QuasiStaticCurrent(p, v_term - p.Ke * w, s);
  return SpeedDerivative(p, i, w, t_load, s);
}

/// Fan-law load torque c·ω·|ω| (smooth enough for automatic differentiation).
template <typename T>
T FanTorque(const T& c, const T& w) {
  using std::sqrt;
  return c * w * sqrt(w * w + T(1e-12));
}

/// Two-state (i, ω) right-hand side for each drive mode.
template <typename T>
struct StateT {
  T i, w;
};

template <typename T>
StateT<T> Derivative(const ParamsT<T>& p, Drive drive, const T& v_term, const StateT<T>& x,
                     const T& t_load, const Smoothing& s) {
  switch (drive) {
    case Drive::kConnected:
      return {CurrentDerivative(p, v_term, x.i, x.w, s), SpeedDerivative(p, x.i, x.w, t_load, s)};
    case Drive::kOpenCircuit:
      return {T(0.0), SpeedDerivative(p, T(0.0), x.w, t_load, s)};
    case Drive::kLocked:
      return {CurrentDerivative(p, v_term, x.i, T(0.0), s), T(0.0)};
  }
  return {T(0.0), T(0.0)};
}

/// One classical Runge–Kutta step of the (i, ω) system with constant inputs over dt.
template <typename T>
StateT<T> Rk4Step(const ParamsT<T>& p, Drive drive, const T& v_term, const StateT<T>& x,
                  const T& t_load, double dt, const Smoothing& s) {
  auto add = [](const StateT<T>& a, const StateT<T>& d, double h) {
    return StateT<T>{a.i + h * d.i, a.w + h * d.w};
  };
  const StateT<T> k1 = Derivative(p, drive, v_term, x, t_load, s);
  const StateT<T> k2 = Derivative(p, drive, v_term, add(x, k1, dt / 2), t_load, s);
  const StateT<T> k3 = Derivative(p, drive, v_term, add(x, k2, dt / 2), t_load, s);
  const StateT<T> k4 = Derivative(p, drive, v_term, add(x, k3, dt), t_load, s);
  return {x.i + dt / 6 * (k1.i + 2.0 * k2.i + 2.0 * k3.i + k4.i),
          x.w + dt / 6 * (k1.w + 2.0 * k2.w + 2.0 * k3.w + k4.w)};
}

}  // namespace rb::model
