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
  // Efficiency is unimodal in T on [0, stall]: golden-section search.
  double a = 0, b = c.stall_torque;
  const double g = (std::sqrt(5.0) - 1) / 2;
  double x1 = b - g * (b - a), x2 = a + g * (b - a);
  double f1 = PointAtTorque(p, v, x1).efficiency, f2 = PointAtTorque(p, v, x2).efficiency;
  for (int k = 0; k < 200 && b - a > 1e-15 * std::max(1.0, c.stall_torque); ++k) {
    if (f1 < f2) {
      a = x1; x1 = x2; f1 = f2; x2 = a + g * (b - a); f2 = PointAtTorque(p, v, x2).efficiency;
    } else {
      b = x2; x2 = x1; f2 = f1; x1 = b - g * (b - a); f1 = PointAtTorque(p, v, x1).efficiency;
    }
  }
  c.max_efficiency = PointAtTorque(p, v, 0.5 * (a + b));
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
    if (e.cov(j, j) <= 0) continue;
    const double h = ParamStep(e.value, j);
    MotorParams up = e.value, dn = e.value;
    Set(&up, j, Get(e.value, j) + h);
    Set(&dn, j, Get(e.value, j) - h);
    jac.col(j) = (CharacteristicsVector(ComputeCharacteristics(up, v)) -
                  CharacteristicsVector(ComputeCharacteristics(dn, v))) /
                 (2 * h);
  }
  const Eigen::Matrix<double, kNumCharacteristics, kNumCharacteristics> cc =
      jac * e.cov * jac.transpose();
  for (int i = 0; i < kNumCharacteristics; ++i) out.u(i) = std::sqrt(std::max(0.0, cc(i, i)));
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
