#include "model/characteristics.h"

#include <algorithm>
#include <cmath>

#include "model/closed_form.h"

namespace rb::model {
namespace {

/// Speed at zero output torque and the slope dω/dT of the (linear) torque–speed line.
void SpeedLine(const MotorParams& p, double v, double* w0, double* slope) {
  const double denom = p.Ke + p.R * p.b / p.Kt();
  *w0 = (v - p.Vb - p.R * p.Tc / p.Kt()) / denom;
  *slope = (p.R / p.Kt()) / denom;
}

/// η(T) = T·(ω0 − s·T) / (v·(α·T + I0)) with α = (1 − b·s)/Kt and I0 = (Tc + b·ω0)/Kt.
/// dη/dT = 0 ⇔ s·α·T² + 2·s·I0·T − ω0·I0 = 0, whose positive root, written without
/// cancellation, is T* = Ts/(1 + √(1 + α·Ts/I0)) with Ts = ω0/s the stall torque. With
/// I0 = Tc = 0 it reduces to (1 − √(I0/Is))² at I = √(I0·Is) (domain.md §2.4).
OperatingPoint MaxEfficiencyPoint(const MotorParams& p, double v, double w0, double s,
                                  double stall_torque) {
  const double i0 = (p.Tc + p.b * w0) / p.Kt();
  const double alpha = (1 - p.b * s) / p.Kt();
  if (stall_torque <= 0) return PointAtTorque(p, v, 0.0);  // does not run: η = 0
  if (i0 <= 0) {
    // No running losses: η rises towards (ω0/α)/v as T → 0+; report that limit at no load.
    OperatingPoint op = PointAtTorque(p, v, 0.0);
    op.efficiency = v > 0 ? w0 / (alpha * v) : 0.0;
    return op;
  }
  return PointAtTorque(p, v, stall_torque / (1 + std::sqrt(1 + alpha * stall_torque / i0)));
}

}  // namespace

OperatingPoint PointAtTorque(const MotorParams& p, double v, double torque) {
  double w0, s;
  SpeedLine(p, v, &w0, &s);
  OperatingPoint op;
  op.torque = std::max(0.0, torque);
  op.speed = w0 - s * op.torque;
  if (op.speed <= 0) {  // stalled: the motor gives what it can at zero speed
    op.speed = 0;
    op.torque = std::max(0.0, w0 / s);
    op.current = std::max(0.0, (v - p.Vb) / p.R);
  } else {
    op.current = (op.torque + p.Tc + p.b * op.speed) / p.Kt();
  }
  op.power_out = op.torque * op.speed;
  op.power_in = v * op.current;
  op.efficiency = op.power_in > 0 ? op.power_out / op.power_in : 0.0;
  return op;
}

OperatingPoint PointAtSpeed(const MotorParams& p, double v, double w) {
  OperatingPoint op;
  op.speed = w;
  op.current = (v - p.Vb - p.Ke * w) / p.R;
  op.torque = p.Kt() * op.current - p.Tc - p.b * w;
  op.power_out = op.torque * op.speed;
  op.power_in = v * op.current;
  op.efficiency =
      (op.torque >= 0 && op.current > 0 && op.power_in > 0) ? op.power_out / op.power_in : 0.0;
  return op;
}

Characteristics ComputeCharacteristics(const MotorParams& p, double v) {
  Characteristics c;
  c.voltage = v;
  double w0, s;
  SpeedLine(p, v, &w0, &s);
  const OperatingPoint nl = PointAtTorque(p, v, 0.0);
  c.no_load_speed = nl.speed;
  c.no_load_current = nl.current;
  c.stall_current = std::max(0.0, (v - p.Vb) / p.R);
  c.stall_torque = std::max(0.0, w0 / s);
  // Output power T·(ω0 − s·T) peaks at T = ω0/(2s): half the stall torque.
  c.max_power = PointAtTorque(p, v, 0.5 * c.stall_torque);
  c.max_efficiency = MaxEfficiencyPoint(p, v, w0, s, c.stall_torque);
  c.motor_constant = p.Kt() / std::sqrt(p.R);
  c.mech_time_constant = MechanicalTimeConstant(p);
  return c;
}

Eigen::Matrix<double, kNumCharacteristics, 1> CharacteristicsVector(const Characteristics& c) {
  Eigen::Matrix<double, kNumCharacteristics, 1> v;
  v << c.no_load_speed, c.no_load_current, c.stall_current, c.stall_torque,
      c.max_power.power_out, c.max_power.speed, c.max_power.torque, c.max_power.current,
      c.max_efficiency.efficiency, c.max_efficiency.speed, c.max_efficiency.torque,
      c.max_efficiency.current, c.motor_constant, c.mech_time_constant;
  return v;
}

Uncertain CharacteristicsU::Get(CharacteristicIndex i) const {
  return {CharacteristicsVector(nominal)(i), u(i)};
}

double ParamStep(const MotorParams& p, int index) {
  static constexpr double kFloor[kNumParams] = {1e-3, 1e-6, 1e-4, 1e-9, 1e-6, 1e-9, 1e-3};
  return 1e-6 * std::max(std::fabs(Get(p, index)), kFloor[index]);
}

CharacteristicsU ComputeCharacteristicsU(const MotorEstimate& e, double v) {
  CharacteristicsU out;
  out.nominal = ComputeCharacteristics(e.value, v);
  // One gradient per characteristic: J (figures × params), then diag(J·C·Jᵀ).
  Eigen::Matrix<double, kNumCharacteristics, kNumParams> jac =
      Eigen::Matrix<double, kNumCharacteristics, kNumParams>::Zero();
  for (int j = 0; j < kNumParams; ++j) {
    if (!Estimated(e, j)) continue;
    const double h = ParamStep(e.value, j);
    MotorParams up = e.value, dn = e.value;
    Set(&up, j, Get(e.value, j) + h);
    Set(&dn, j, Get(e.value, j) - h);
    jac.col(j) = (CharacteristicsVector(ComputeCharacteristics(up, v)) -
                  CharacteristicsVector(ComputeCharacteristics(dn, v))) /
                 (2 * h);
  }
  const Eigen::Matrix<double, kNumCharacteristics, kNumCharacteristics> cc =
      jac * UsableCovariance(e) * jac.transpose();
  for (int i = 0; i < kNumCharacteristics; ++i) out.u(i) = std::sqrt(std::max(0.0, cc(i, i)));
  return out;
}

namespace {

/// The operating point at torque T on the straight torque–speed line, not clamped at stall,
/// so that it is smooth in the parameters at every T (for the delta method at a fixed T).
OperatingPoint PointOnLine(const MotorParams& p, double v, double torque) {
  double w0, s;
  SpeedLine(p, v, &w0, &s);
  OperatingPoint op;
  op.torque = torque;
  op.speed = w0 - s * torque;
  op.current = (torque + p.Tc + p.b * op.speed) / p.Kt();
  op.power_out = op.torque * op.speed;
  op.power_in = v * op.current;
  op.efficiency = op.power_in != 0 ? op.power_out / op.power_in : 0.0;
  return op;
}

Eigen::VectorXd PointVector(const OperatingPoint& op) {
  Eigen::VectorXd x(6);
  x << op.torque, op.speed, op.current, op.power_out, op.power_in, op.efficiency;
  return x;
}

OperatingPoint PointFromVector(const Eigen::VectorXd& x, Eigen::Index at) {
  OperatingPoint op;
  op.torque = x(at);
  op.speed = x(at + 1);
  op.current = x(at + 2);
  op.power_out = x(at + 3);
  op.power_in = x(at + 4);
  op.efficiency = x(at + 5);
  return op;
}

}  // namespace

CurvesU CharacteristicCurvesU(const MotorEstimate& e, double v, int n) {
  CurvesU out;
  out.voltage = v;
  n = std::max(2, n);
  const double ts = ComputeCharacteristics(e.value, v).stall_torque;
  std::vector<double> torque(static_cast<size_t>(n));
  for (int k = 0; k < n; ++k) torque[static_cast<size_t>(k)] = ts * k / (n - 1);
  auto all = [&](const MotorParams& p) {
    Eigen::VectorXd x(6 * n);
    for (int k = 0; k < n; ++k) {
      x.segment(6 * k, 6) = PointVector(PointOnLine(p, v, torque[static_cast<size_t>(k)]));
    }
    return x;
  };
  Eigen::VectorXd u = PropagateU(e, all);
  for (int k = 0; k < n; ++k) {
    out.value.push_back(PointAtTorque(e.value, v, torque[static_cast<size_t>(k)]));
    u(6 * k) = 0;  // the abscissa
    out.u.push_back(PointFromVector(u, 6 * k));
  }
  return out;
}

std::vector<OperatingPoint> TorqueSpeedCurve(const MotorParams& p, double v, int n) {
  const Characteristics c = ComputeCharacteristics(p, v);
  std::vector<OperatingPoint> out;
  out.reserve(static_cast<size_t>(std::max(2, n)));
  for (int k = 0; k < std::max(2, n); ++k) {
    out.push_back(PointAtTorque(p, v, c.stall_torque * k / (std::max(2, n) - 1)));
  }
  return out;
}

}  // namespace rb::model
