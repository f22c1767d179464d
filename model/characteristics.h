// rotorbench model: what a parameter set means at a supply voltage — no-load point,
// stall, torque–speed–current–power–efficiency curves, the maximum-power and
// maximum-efficiency points — and their uncertainty from the fit's covariance.
//
// Steady state with L irrelevant: V − Vb = R·i + Ke·ω and Kt·i = T + Tc + b·ω, where T is
// the output (load) torque. Speed falls linearly with torque, ω = ω0 − s·T, and current
// rises linearly, i = α·T + I0, so the maximum-power point (T = Tstall/2) and the
// maximum-efficiency point (T = Tstall/(1 + √(1 + α·Tstall/I0))) have closed forms.
// Uncertainty is propagated by the delta method: a central-difference gradient of each
// figure with respect to the seven parameters, u² = gᵀ·C·g (docs/design.md
// §uncertainty of derived figures). SI units. Pure functions; thread-safe.
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <vector>

#include "model/params.h"

namespace rb::model {

using ParamCovariance = Eigen::Matrix<double, kNumParams, kNumParams>;

/// A parameter set with its covariance (rows/columns in ParamIndex order, SI units;
/// zero rows for parameters that were fixed rather than estimated).
struct MotorEstimate {
  MotorParams value;
  ParamCovariance cov = ParamCovariance::Zero();
};

/// One steady operating point.
struct OperatingPoint {
  double torque = 0;      ///< output torque at the shaft [N·m]
  double speed = 0;       ///< [rad/s]
  double current = 0;     ///< [A]
  double power_out = 0;   ///< T·ω [W]
  double power_in = 0;    ///< V·i [W]
  double efficiency = 0;  ///< power_out / power_in (0 at no load and at stall)
};

/// The operating point delivering output torque T at supply voltage v; speed clamps at 0
/// (stall) when T exceeds what the motor can give.
OperatingPoint PointAtTorque(const MotorParams& p, double v, double torque);

/// The operating point running at speed w [rad/s] from supply voltage v: i = (v − Vb − Ke·ω)/R,
/// T = Kt·i − Tc − b·ω. The torque is negative above the no-load speed (the shaft would
/// have to be driven); efficiency is reported only where 0 ≤ T and i > 0, else 0.
OperatingPoint PointAtSpeed(const MotorParams& p, double v, double w);

/// The figures a user asks for at one supply voltage.
struct Characteristics {
  double voltage = 0;          ///< [V]
  double no_load_speed = 0;    ///< [rad/s]
  double no_load_current = 0;  ///< [A]
  double stall_current = 0;    ///< [A]
  double stall_torque = 0;     ///< [N·m] (output torque as speed → 0)
  OperatingPoint max_power;       ///< the point of maximum output power
  OperatingPoint max_efficiency;  ///< the point of maximum efficiency
  double motor_constant = 0;   ///< Km = Kt/√R [N·m/√W]
  double mech_time_constant = 0;  ///< τm [s]
};

/// Field order of Characteristics for uncertainty propagation and tables.
enum CharacteristicIndex : int {
  kNoLoadSpeed = 0, kNoLoadCurrent, kStallCurrent, kStallTorque,
  kMaxPower, kMaxPowerSpeed, kMaxPowerTorque, kMaxPowerCurrent,
  kMaxEfficiency, kMaxEffSpeed, kMaxEffTorque, kMaxEffCurrent,
  kMotorConstant, kMechTimeConstant, kNumCharacteristics
};

Characteristics ComputeCharacteristics(const MotorParams& p, double v);

/// The characteristics as a vector in CharacteristicIndex order.
Eigen::Matrix<double, kNumCharacteristics, 1> CharacteristicsVector(const Characteristics& c);

/// A value with its standard uncertainty (1σ).
struct Uncertain {
  double value = 0;
  double u = 0;
};

/// Characteristics with standard uncertainties, by the delta method.
struct CharacteristicsU {
  Characteristics nominal;
  Eigen::Matrix<double, kNumCharacteristics, 1> u =
      Eigen::Matrix<double, kNumCharacteristics, 1>::Zero();
  Uncertain Get(CharacteristicIndex i) const;
};

CharacteristicsU ComputeCharacteristicsU(const MotorEstimate& e, double v);

/// Generic delta method: standard uncertainty of f(params) given the covariance, with a
/// central-difference gradient (relative step 1e-6 of each parameter's magnitude).
template <typename F>
double DeltaMethodU(const MotorEstimate& e, F&& f);

/// `n` points from no load to stall, evenly spaced in output torque.
std::vector<OperatingPoint> TorqueSpeedCurve(const MotorParams& p, double v, int n = 101);

/// The characteristic curves with a standard uncertainty at every point: value[k] is the
/// operating point at output torque T_k (evenly spaced from 0 to the nominal stall torque),
/// u[k] the standard uncertainty of each of its fields at that same T_k (u[k].torque = 0:
/// torque is the abscissa). Speed, current, output and input power and efficiency each
/// get their own delta-method band, computed on the straight torque–speed line (not
/// clamped at stall, so the band is smooth up to and including the stall end).
struct CurvesU {
  double voltage = 0;
  std::vector<OperatingPoint> value;
  std::vector<OperatingPoint> u;
};
CurvesU CharacteristicCurvesU(const MotorEstimate& e, double v, int n = 101);

/// Central-difference Jacobian of a vector-valued f(params) (rows: outputs, columns:
/// parameters in ParamIndex order); columns of parameters with zero variance stay 0.
template <typename F>
Eigen::MatrixXd ParamJacobian(const MotorEstimate& e, F&& f);

/// Delta method for several figures at once: u_i = √(J·C·Jᵀ)_ii.
template <typename F>
Eigen::VectorXd PropagateU(const MotorEstimate& e, F&& f);

// ---- implementation of the templates
double ParamStep(const MotorParams& p, int index);

/// Whether parameter j is estimated: a positive, finite variance and a finite value. A
/// parameter the data could not determine (NaN value or variance) is left out.
inline bool Estimated(const MotorEstimate& e, int j) {
  return e.cov(j, j) > 0 && std::isfinite(e.cov(j, j)) && std::isfinite(Get(e.value, j));
}

/// The covariance restricted to estimated parameters (other rows and columns zero), so that
/// a NaN entry of an undetermined parameter cannot spread into every result.
inline ParamCovariance UsableCovariance(const MotorEstimate& e) {
  ParamCovariance c = ParamCovariance::Zero();
  for (int i = 0; i < kNumParams; ++i) {
    for (int k = 0; k < kNumParams; ++k) {
      if (Estimated(e, i) && Estimated(e, k) && std::isfinite(e.cov(i, k))) c(i, k) = e.cov(i, k);
    }
  }
  return c;
}

template <typename F>
Eigen::MatrixXd ParamJacobian(const MotorEstimate& e, F&& f) {
  const Eigen::VectorXd f0 = f(e.value);
  Eigen::MatrixXd jac = Eigen::MatrixXd::Zero(f0.size(), kNumParams);
  for (int j = 0; j < kNumParams; ++j) {
    if (!Estimated(e, j)) continue;
    const double h = ParamStep(e.value, j);
    MotorParams up = e.value, dn = e.value;
    Set(&up, j, Get(e.value, j) + h);
    Set(&dn, j, Get(e.value, j) - h);
    jac.col(j) = (f(up) - f(dn)) / (2 * h);
  }
  return jac;
}

template <typename F>
Eigen::VectorXd PropagateU(const MotorEstimate& e, F&& f) {
  const Eigen::MatrixXd jac = ParamJacobian(e, f);
  const Eigen::MatrixXd cc = jac * UsableCovariance(e) * jac.transpose();
  Eigen::VectorXd u(cc.rows());
  for (Eigen::Index i = 0; i < cc.rows(); ++i) u(i) = std::sqrt(std::max(0.0, cc(i, i)));
  return u;
}

template <typename F>
double DeltaMethodU(const MotorEstimate& e, F&& f) {
  Eigen::Matrix<double, kNumParams, 1> g = Eigen::Matrix<double, kNumParams, 1>::Zero();
  for (int j = 0; j < kNumParams; ++j) {
    if (!Estimated(e, j)) continue;
    const double h = ParamStep(e.value, j);
    MotorParams up = e.value, dn = e.value;
    Set(&up, j, Get(e.value, j) + h);
    Set(&dn, j, Get(e.value, j) - h);
    g(j) = (f(up) - f(dn)) / (2 * h);
  }
  const double var = g.dot(UsableCovariance(e) * g);
  return var > 0 ? std::sqrt(var) : 0.0;
}

}  // namespace rb::model
