// Fan-law load: estimate c from a loaded run, and the operating point on that load.
//
// Steady state on a fan load from a source v_s behind r_s (L irrelevant, Kt = Ke):
//   i = (v_s − Vb − Ke·ω)/(R + r_s),   Kt·i = Tc + b·ω + c·ω².
// Eliminating i gives c·ω² + (b + Kt·Ke/R_t)·ω + (Tc − Kt(v_s − Vb)/R_t) = 0, whose
// positive root is the operating speed. The estimator inverts the same balance at the
// measured mean speed and terminal voltage (r_s = 0 there), so that errors in R and Ke
// largely cancel when the rewound motor is predicted on the same load.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>

#include "rewind/rewind.h"

namespace rb::rewind {
namespace {

struct WindowMeans {
  double speed = NAN, current = NAN, voltage = NAN;
  double speed_se = 0, voltage_se = 0;  ///< standard errors of the means (block method)
  std::size_t n_speed = 0, n_current = 0, n_voltage = 0;
  double drift = 0;  ///< relative speed change between the window's halves
};

/// Mean and standard error from 8 block means (robust to correlated noise).
void MeanAndSe(const std::vector<double>& x, double* mean, double* se) {
  *mean = x.empty() ? NAN : std::accumulate(x.begin(), x.end(), 0.0) / x.size();
  *se = 0;
  constexpr size_t kBlocks = 8;
  if (x.size() < 2 * kBlocks) return;
  std::vector<double> m;
  const size_t per = x.size() / kBlocks;
  for (size_t b = 0; b < kBlocks; ++b) {
    m.push_back(std::accumulate(x.begin() + b * per, x.begin() + (b + 1) * per, 0.0) / per);
  }
  double ss = 0;
  for (double v : m) ss += (v - *mean) * (v - *mean);
  *se = std::sqrt(ss / (kBlocks - 1) / kBlocks);
}

WindowMeans Means(const std::vector<model::Sample>& s, double t0, double t1) {
  WindowMeans w;
  std::vector<double> sp, cu, vo, first, second;
  const double mid = 0.5 * (t0 + t1);
  for (const model::Sample& x : s) {
    if (x.t < t0 || x.t > t1) continue;
    if (model::HasSpeed(x)) {
      sp.push_back(x.speed);
      (x.t < mid ? first : second).push_back(x.speed);
    }
    if (model::HasCurrent(x)) cu.push_back(x.current);
    if (model::HasVoltage(x)) vo.push_back(x.voltage);
  }
  double se_unused = 0;
  MeanAndSe(sp, &w.speed, &w.speed_se);
  MeanAndSe(cu, &w.current, &se_unused);
  MeanAndSe(vo, &w.voltage, &w.voltage_se);
  w.n_speed = sp.size();
  w.n_current = cu.size();
  w.n_voltage = vo.size();
  if (!first.empty() && !second.empty()) {
    const double a = std::accumulate(first.begin(), first.end(), 0.0) / first.size();
    const double b = std::accumulate(second.begin(), second.end(), 0.0) / second.size();
    w.drift = std::fabs(b - a) / std::max(1e-12, std::fabs(w.speed));
  }
  return w;
}

/// c from the steady balance at speed w and terminal voltage v.
double CFromVoltage(const model::MotorParams& p, double w, double v) {
  const double i = (v - p.Vb - p.Ke * w) / p.R;
  return (p.Kt() * i - p.Tc - p.b * w) / (w * w);
}

}  // namespace

Result<FanLoadEstimate> EstimateFanLoad(const model::MotorEstimate& motor,
                                        const std::vector<model::Sample>& samples,
                                        std::optional<double> nominal_voltage,
                                        const FanLoadOptions& options) {
  if (samples.size() < 10) {
    return Status::FailedPrecondition("loaded run: too few samples to find a steady speed");
  }
  const double t_end = samples.back().t;
  const double t_start = samples.front().t;
  FanLoadEstimate out;
  out.t_to = t_end;
  out.t_from = t_end - options.window_fraction * (t_end - t_start);
  const WindowMeans w = Means(samples, out.t_from, out.t_to);
  if (w.n_speed < 5 || !(w.speed > 0)) {
    return Status::FailedPrecondition(fmt::format(
        "loaded run: no speed readings above zero between {:.3f} s and {:.3f} s; the load "
        "estimate needs the tach", out.t_from, out.t_to));
  }
  if (w.drift > options.max_drift) {
    return Status::FailedPrecondition(fmt::format(
        "loaded run: the speed still changes by {:.1f} % across the last {:.0f} % of the run "
        "(limit {:.1f} %); log longer so the motor settles on its load",
        100 * w.drift, 100 * options.window_fraction, 100 * options.max_drift));
  }
  const model::MotorParams& p = motor.value;
  out.speed = w.speed;
  out.current = w.current;
  out.n_speed = w.n_speed;
  out.n_voltage = w.n_voltage;
  if (w.n_voltage > 0) {
    out.v_terminal = w.voltage;
    out.c = CFromVoltage(p, w.speed, w.voltage);
  } else if (w.n_current > 0 && nominal_voltage) {
    out.v_terminal = p.Vb + p.R * w.current + p.Ke * w.speed;
    out.c = (p.Kt() * w.current - p.Tc - p.b * w.speed) / (w.speed * w.speed);
  } else {
    return Status::FailedPrecondition(
        "loaded run: needs the terminal voltage (or the current and the supply setting)");
  }
  if (w.n_current > 0) {
    out.c_from_current = (p.Kt() * w.current - p.Tc - p.b * w.speed) / (w.speed * w.speed);
  }
  if (!(out.c > 0)) {
    return Status::FailedPrecondition(fmt::format(
        "loaded run: the motor's constants leave no torque for a load at {:.0f} rad/s "
        "(c = {:.3g}); is this a loaded run of the same motor?", w.speed, out.c));
  }
  // The supply: its setting and the resistance that explains the sag under this current.
  out.v_source = out.v_terminal;
  out.r_source = 0;
  if (nominal_voltage && w.n_current > 0 && w.current > 0 && *nominal_voltage > out.v_terminal) {
    out.v_source = *nominal_voltage;
    out.r_source = (*nominal_voltage - out.v_terminal) / w.current;
  }
  // Uncertainty: the motor constants (delta method through the same formula) and the
  // noise of the window means.
  const double vt = out.v_terminal;
  const double u_par = model::DeltaMethodU(motor, [&](const model::MotorParams& q) {
    return CFromVoltage(q, w.speed, vt);
  });
  const double h_w = 1e-6 * w.speed, h_v = 1e-6 * std::max(1.0, vt);
  const double dc_dw = (CFromVoltage(p, w.speed + h_w, vt) - CFromVoltage(p, w.speed - h_w, vt)) / (2 * h_w);
  const double dc_dv = (CFromVoltage(p, w.speed, vt + h_v) - CFromVoltage(p, w.speed, vt - h_v)) / (2 * h_v);
  out.c_u_noise = std::hypot(dc_dw * w.speed_se, dc_dv * w.voltage_se);
  out.c_u = std::hypot(u_par, out.c_u_noise);
  return out;
}

LoadedPoint FanOperatingPoint(const model::MotorParams& p, double c, double v_source,
                              double r_source) {
  LoadedPoint op;
  const double rt = p.R + r_source;
  const double a = c;
  const double b = p.b + p.Kt() * p.Ke / rt;
  const double cc = p.Tc - p.Kt() * (v_source - p.Vb) / rt;
  if (cc >= 0) {
    op.speed = 0;  // cannot break away against friction
  } else if (a <= 0) {
    op.speed = -cc / b;
  } else {
    op.speed = 2 * (-cc) / (b + std::sqrt(b * b - 4 * a * cc));  // stable form of the root
  }
  op.current = std::max(0.0, (v_source - p.Vb - p.Ke * op.speed) / rt);
  op.torque = c * op.speed * op.speed;
  op.v_terminal = v_source - r_source * op.current;
  op.power_out = op.torque * op.speed;
  op.power_in = op.v_terminal * op.current;
  op.efficiency = op.power_in > 0 ? op.power_out / op.power_in : 0.0;
  return op;
}

LoadedPrediction PredictLoaded(const Prediction& pred, const FanLoadEstimate& load) {
  LoadedPrediction out;
  const model::MotorEstimate& base = pred.baseline.estimate;
  out.baseline = FanOperatingPoint(base.value, load.c, load.v_source, load.r_source);
  out.predicted = FanOperatingPoint(pred.predicted.value, load.c, load.v_source, load.r_source);

  // The rewound motor's point as a function of the baseline constants: c is re-estimated
  // with them (the same loaded run), then the scaled motor is put on that load. This keeps
  // the correlation between c and the constants.
  const double k_r = pred.predicted.value.R / base.value.R;
  const double k_ke = pred.predicted.value.Ke / base.value.Ke;
  auto point = [&](const model::MotorParams& q, double mult_r, double mult_ke) {
    const double c = CFromVoltage(q, load.speed, load.v_terminal);
    model::MotorParams s = q;
    s.R *= k_r * mult_r;
    s.Ke *= k_ke * mult_ke;
    s.L *= k_ke * k_ke;
    return FanOperatingPoint(s, c, load.v_source, load.r_source);
  };
  auto u_of = [&](auto field) {
    const double u_base = model::DeltaMethodU(base, [&](const model::MotorParams& q) {
      return field(point(q, 1, 1));
    });
    // Winding tolerances: the predicted covariance less the scaled baseline part, as
    // relative variances of R and Ke (with their correlation).
    const double vr = std::max(0.0, pred.predicted.cov(model::kR, model::kR) -
                                        k_r * k_r * base.cov(model::kR, model::kR)) /
                      (pred.predicted.value.R * pred.predicted.value.R);
    const double vk = std::max(0.0, pred.predicted.cov(model::kKe, model::kKe) -
                                        k_ke * k_ke * base.cov(model::kKe, model::kKe)) /
                      (pred.predicted.value.Ke * pred.predicted.value.Ke);
    const double crk = (pred.predicted.cov(model::kR, model::kKe) -
                        k_r * k_ke * base.cov(model::kR, model::kKe)) /
                       (pred.predicted.value.R * pred.predicted.value.Ke);
    const double h = 1e-6;
    const double hc = 1e-6 * load.c;
    auto at_c = [&](double c) {
      return field(FanOperatingPoint(pred.predicted.value, c, load.v_source, load.r_source));
    };
    const double gc = (at_c(load.c + hc) - at_c(load.c - hc)) / (2 * hc);
    const double gr = (field(point(base.value, 1 + h, 1)) - field(point(base.value, 1 - h, 1))) / (2 * h);
    const double gk = (field(point(base.value, 1, 1 + h)) - field(point(base.value, 1, 1 - h))) / (2 * h);
    const double var = u_base * u_base + gr * gr * vr + gk * gk * vk + 2 * gr * gk * crk +
                       gc * gc * load.c_u_noise * load.c_u_noise;
    return std::sqrt(std::max(0.0, var));
  };
  out.speed_u = u_of([](const LoadedPoint& p) { return p.speed; });
  out.current_u = u_of([](const LoadedPoint& p) { return p.current; });
  out.power_u = u_of([](const LoadedPoint& p) { return p.power_out; });
  return out;
}

}  // namespace rb::rewind
