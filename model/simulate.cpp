#include "model/simulate.h"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "model/closed_form.h"
#include "model/commutator.h"
#include "model/copper.h"

namespace rb::model {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

double Sgn(double x) { return (x > 0) - (x < 0); }

/// Brush drop as a dead zone: the part of e that drives current through the resistance.
double DeadZone(double e, double vb) {
  if (e > vb) return e - vb;
  if (e < -vb) return e + vb;
  return 0.0;
}

}  // namespace

BenchSimulator::BenchSimulator(const BenchModel& model) : model_(model), rng_(model.seed) {
  x_.temperature_C = model.thermal.start_temperature_C;
  if (model_.commutator.segments >= 2) {
    mean_factor_ =
        MeanBrushResistanceFactor(model_.commutator.segments, model_.commutator.brush_fraction);
  }
  next_mark_angle_ = kTwoPi / std::max(1, model_.instruments.tach.marks_per_rev);
}

void BenchSimulator::SetDrive(Drive d) {
  drive_ = d;
  if (d == Drive::kOpenCircuit) x_.i = 0;  // the switch opens the circuit
  if (d == Drive::kLocked) x_.w = 0;
}

void BenchSimulator::SetSpeed(double w) {
  x_.w = w;
  if (drive_ == Drive::kConnected) {
    const double r = ResistanceAt(x_.theta, x_.temperature_C) + model_.supply.internal_resistance_ohm;
    x_.i = DeadZone(supply_v_ - model_.motor.Ke * w, model_.motor.Vb) / r;
  }
}

double BenchSimulator::ResistanceAt(double theta, double temperature_C) const {
  double r = model_.motor.R;
  if (model_.commutator.segments >= 2) {
    r *= BrushResistanceFactor(model_.commutator.segments, model_.commutator.brush_fraction,
                               theta) /
         mean_factor_;
  }
  if (model_.thermal.heat_capacity_J_per_K > 0) {
    r *= CopperResistanceAt(1.0, temperature_C) /
         CopperResistanceAt(1.0, model_.thermal.start_temperature_C);
  }
  return r;
}

double BenchSimulator::SampleAdc(const AdcChannelModel& ch, double value) {
  double v = value * (1.0 + ch.gain_error) + ch.offset;
  if (ch.noise_sd > 0) v += std::normal_distribution<double>(0.0, ch.noise_sd)(rng_);
  if (ch.spike_probability > 0 &&
      std::bernoulli_distribution(ch.spike_probability)(rng_)) {
    v += ch.spike_size;
  }
  return std::clamp(v, -ch.full_scale, ch.full_scale);
}

void BenchSimulator::AdvanceTo(double t, Observations* out) {
  const double adc_dt = 1.0 / model_.instruments.adc_rate_hz;
  if (next_adc_t_ < x_.t) next_adc_t_ = x_.t;
  while (x_.t < t) {
    const bool fine = drive_ == Drive::kConnected ||
                      (drive_ == Drive::kLocked && model_.motor.L > 0);
    const double h = fine ? model_.step_s : 10 * model_.step_s;
    const double stop = std::min({t, x_.t + h, next_adc_t_});
    if (stop > x_.t) Step(stop - x_.t, out);
    if (x_.t >= next_adc_t_) {
      const AdcChannelModel& ci = model_.instruments.current;
      const AdcChannelModel& cv = model_.instruments.voltage;
      const double i_meas = SampleAdc(ci, x_.i);
      const double v_meas = SampleAdc(cv, x_.v_terminal);
      out->adc.push_back({next_adc_t_, static_cast<std::int32_t>(std::lround(i_meas / ci.lsb)),
                          static_cast<std::int32_t>(std::lround(v_meas / cv.lsb))});
      if (out->record_truth) out->truth.push_back(x_);
      next_adc_t_ += adc_dt;
    }
  }
}

void BenchSimulator::Step(double dt, Observations* out) {
  const MotorParams& m = model_.motor;
  const double rs = model_.supply.internal_resistance_ohm;
  const double vs = supply_v_;
  const ThermalModel& th = model_.thermal;
  const bool quasi_static_i =
      m.L <= 0 || m.L / (m.R + rs) < 3 * model_.step_s;

  // Signs are frozen over the step (friction and brush drop are discontinuous at 0).
  double s_i = Sgn(x_.i);
  if (s_i == 0 && drive_ != Drive::kOpenCircuit) {
    const double e = vs - (drive_ == Drive::kLocked ? 0.0 : m.Ke * x_.w);
    s_i = std::fabs(e) > m.Vb ? Sgn(e) : 0.0;
  }
  struct S {
    double i, w, theta, temp;
  };
  auto current_of = [&](const S& x) {
    const double r = ResistanceAt(x.theta, x.temp) + rs;
    const double e = vs - (drive_ == Drive::kLocked ? 0.0 : m.Ke * x.w);
    return s_i == 0 ? 0.0 : (e - m.Vb * s_i) / r;
  };
  const S x0{x_.i, x_.w, x_.theta, x_.temperature_C};

  double s_w = Sgn(x_.w);
  bool stuck = false;
  if (s_w == 0 && drive_ != Drive::kLocked) {
    const double i_now = drive_ == Drive::kOpenCircuit ? 0.0
                         : quasi_static_i              ? current_of(x0)
                                                       : x_.i;
    const double t_drive = m.Kt() * i_now - model_.load.Torque(0.0);
    if (std::fabs(t_drive) <= m.Tc) stuck = true;
    s_w = Sgn(t_drive);
  }
  auto deriv = [&](const S& x) {
    S d{0, 0, 0, 0};
    double i = x.i;
    if (drive_ == Drive::kOpenCircuit) {
      i = 0;
    } else if (quasi_static_i) {
      i = current_of(x);
    } else if (s_i != 0) {
      const double r = ResistanceAt(x.theta, x.temp) + rs;
      const double e = vs - (drive_ == Drive::kLocked ? 0.0 : m.Ke * x.w);
      d.i = (e - r * x.i - m.Vb * s_i) / m.L;
    }
    if (drive_ != Drive::kLocked && !stuck) {
      d.w = (m.Kt() * i - m.Tc * s_w - m.b * x.w - model_.load.Torque(x.w)) / m.J;
    }
    d.theta = x.w;
    if (th.heat_capacity_J_per_K > 0) {
      d.temp = (i * i * ResistanceAt(x.theta, x.temp) -
                (x.temp - th.start_temperature_C) / th.thermal_resistance_K_per_W) /
               th.heat_capacity_J_per_K;
    }
    return d;
  };
  auto add = [](const S& a, const S& d, double h) {
    return S{a.i + h * d.i, a.w + h * d.w, a.theta + h * d.theta, a.temp + h * d.temp};
  };

  const S k1 = deriv(x0);
  const S k2 = deriv(add(x0, k1, dt / 2));
  const S k3 = deriv(add(x0, k2, dt / 2));
  const S k4 = deriv(add(x0, k3, dt));
  S x1{x0.i + dt / 6 * (k1.i + 2 * k2.i + 2 * k3.i + k4.i),
       x0.w + dt / 6 * (k1.w + 2 * k2.w + 2 * k3.w + k4.w),
       x0.theta + dt / 6 * (k1.theta + 2 * k2.theta + 2 * k3.theta + k4.theta),
       x0.temp + dt / 6 * (k1.temp + 2 * k2.temp + 2 * k3.temp + k4.temp)};
  if (drive_ == Drive::kOpenCircuit) x1.i = 0;
  if (quasi_static_i && drive_ != Drive::kOpenCircuit) x1.i = current_of(x1);
  if (s_i != 0 && Sgn(x1.i) != s_i) x1.i = 0;  // current cannot reverse through the dead zone
  if (s_w != 0 && Sgn(x1.w) == -s_w && !stuck) x1.w = 0;  // friction stops, never reverses
  if (stuck) x1.w = 0;
  if (x1.theta < x0.theta) x1.theta = x0.theta;  // the bench motor turns one way

  // Tach marks crossed during the step, at linearly interpolated times.
  const TachModel& tach = model_.instruments.tach;
  const double mark_pitch = kTwoPi / std::max(1, tach.marks_per_rev);
  while (x1.theta >= next_mark_angle_) {
    const double frac =
        x1.theta > x0.theta ? (next_mark_angle_ - x0.theta) / (x1.theta - x0.theta) : 1.0;
    const double tm = x_.t + frac * dt;
    const bool missed =
        tach.miss_probability > 0 && std::bernoulli_distribution(tach.miss_probability)(rng_);
    if (!missed) {
      const double res = tach.timer_resolution_s;
      out->tach_marks.push_back(res > 0 ? std::floor(tm / res) * res : tm);
    }
    next_mark_angle_ += mark_pitch;
  }

  x_.t += dt;
  x_.i = x1.i;
  x_.w = x1.w;
  x_.theta = x1.theta;
  x_.temperature_C = x1.temp;
  switch (drive_) {
    case Drive::kConnected:
    case Drive::kLocked: x_.v_terminal = vs - rs * x_.i; break;
    case Drive::kOpenCircuit: x_.v_terminal = m.Ke * x_.w; break;
  }
}

std::vector<Sample> TachReadings(const std::vector<double>& marks, const TachModel& tach,
                                 double t0, double t1) {
  std::vector<Sample> out;
  auto emit_zeros = [&](double from, double until) {
    for (double z = from; z < until && z <= t1; z += tach.zero_interval_s) {
      if (z >= t0) out.push_back({.t = z, .speed = 0.0});
    }
  };
  const double pitch = kTwoPi / std::max(1, tach.marks_per_rev);
  double last = (!marks.empty() && marks.front() < t0) ? marks.front() : t0 - tach.stop_timeout_s;
  bool have_last_mark = !marks.empty() && marks.front() < t0;
  size_t k = have_last_mark ? 1 : 0;
  for (; k < marks.size(); ++k) {
    const double m = marks[k];
    if (m > t1) break;
    if (m - last > tach.stop_timeout_s) {
      emit_zeros(last + tach.stop_timeout_s, m);
    } else if (have_last_mark && m >= t0 && m > last) {
      out.push_back({.t = m, .speed = pitch / (m - last)});
    }
    last = m;
    have_last_mark = true;
  }
  emit_zeros(last + tach.stop_timeout_s, t1 + 1e-12);
  return out;
}

std::vector<Sample> AdcReadings(const std::vector<AdcSample>& adc, const InstrumentModel& ins) {
  std::vector<Sample> out;
  out.reserve(adc.size());
  for (const AdcSample& a : adc) {
    out.push_back({.t = a.t,
                   .current = a.current_counts * ins.current.lsb,
                   .voltage = a.voltage_counts * ins.voltage.lsb});
  }
  return out;
}

std::vector<Sample> MergeReadings(std::vector<Sample> a, std::vector<Sample> b) {
  std::vector<Sample> all;
  all.reserve(a.size() + b.size());
  std::merge(a.begin(), a.end(), b.begin(), b.end(), std::back_inserter(all),
             [](const Sample& x, const Sample& y) { return x.t < y.t; });
  std::vector<Sample> out;
  out.reserve(all.size());
  for (const Sample& s : all) {
    if (!out.empty() && out.back().t == s.t) {
      Sample& o = out.back();
      if (HasSpeed(s)) o.speed = s.speed;
      if (HasCurrent(s)) o.current = s.current;
      if (HasVoltage(s)) o.voltage = s.voltage;
    } else {
      out.push_back(s);
    }
  }
  return out;
}

Result<SimulatedRun> SimulateRun(const BenchModel& model, const RunScript& script) {
  if (script.kind == RunKind::kGenerator || script.kind == RunKind::kFree) {
    return Status::Unsupported("simulating a '" + std::string(RunKindName(script.kind)) +
                               "' run needs an external shaft drive; not modelled");
  }
  const MotorParams& m = model.motor;
  if (!(m.R > 0 && m.Ke > 0 && m.J > 0 && m.Tc >= 0 && m.b >= 0 && m.L >= 0 && m.Vb >= 0)) {
    return Status::InvalidArgument(
        "motor parameters must have R, Ke, J > 0 and L, Tc, b, Vb >= 0");
  }
  BenchSimulator sim(model);
  Observations obs;
  obs.record_truth = true;
  SimulatedRun run;
  run.kind = script.kind;
  run.nominal_voltage = script.volts;

  double t_log0 = 0;
  const bool settle_first = script.kind == RunKind::kCoastDown || script.kind == RunKind::kSteady;
  if (settle_first) {
    sim.SetSupplyVolts(script.volts);
    sim.SetDrive(Drive::kConnected);
    MotorParams with_source = m;
    with_source.R += model.supply.internal_resistance_ohm;
    sim.SetSpeed(SteadyState(with_source, script.volts, 0.0).w);
    // Settle from the closed-form estimate (load and commutator move it slightly).
    // Whole milliseconds, so the log's clock keeps the timer and ADC grids.
    t_log0 = std::ceil(std::max(0.3, 5 * MechanicalTimeConstant(with_source)) * 1e3) / 1e3;
    sim.AdvanceTo(t_log0, &obs);
  } else if (script.kind == RunKind::kLocked) {
    sim.SetDrive(Drive::kLocked);
    sim.SetRotorAngle(script.rotor_angle);
  } else {
    sim.SetDrive(Drive::kOpenCircuit);  // at rest, switch open
  }
  const size_t adc_begin = obs.adc.size();
  const double t_step = t_log0 + script.pre_s;
  sim.AdvanceTo(t_step, &obs);
  run.step_time_s = script.pre_s;

  double t_end = t_step + script.duration_s;
  switch (script.kind) {
    case RunKind::kSpinUp:
    case RunKind::kLoaded:
      sim.SetSupplyVolts(script.volts);
      sim.SetDrive(Drive::kConnected);
      sim.AdvanceTo(t_end, &obs);
      break;
    case RunKind::kSteady:
      sim.AdvanceTo(t_end, &obs);
      break;
    case RunKind::kLocked:
      sim.SetSupplyVolts(script.volts);
      sim.AdvanceTo(t_end, &obs);
      sim.SetDrive(Drive::kOpenCircuit);
      sim.SetSupplyVolts(0);
      t_end += 0.05;
      sim.AdvanceTo(t_end, &obs);
      break;
    case RunKind::kCoastDown: {
      sim.SetDrive(Drive::kOpenCircuit);
      const double tail = model.instruments.tach.stop_timeout_s + 0.1;
      double stopped_at = -1;
      double t = t_step;
      while (t < t_end) {
        t = std::min(t_end, t + 0.01);
        sim.AdvanceTo(t, &obs);
        if (sim.truth().w == 0 && stopped_at < 0) stopped_at = t;
        if (stopped_at >= 0 && t >= stopped_at + tail) break;
      }
      t_end = t;
      break;
    }
    default:
      break;
  }

  // Instruments' view, shifted so that the log starts at t = 0.
  std::vector<AdcSample> adc(obs.adc.begin() + static_cast<std::ptrdiff_t>(adc_begin),
                             obs.adc.end());
  std::vector<Sample> tach =
      TachReadings(obs.tach_marks, model.instruments.tach, t_log0, t_end);
  std::vector<Sample> analog = AdcReadings(adc, model.instruments);
  // Shift to the log's clock and round to the nanosecond, so that readings taken at the
  // same instant carry the same time stamp and merge into one sample.
  for (auto* v : {&tach, &analog}) {
    for (Sample& s : *v) s.t = std::round((s.t - t_log0) * 1e9) / 1e9;
  }
  run.samples = MergeReadings(std::move(analog), std::move(tach));
  run.truth.assign(obs.truth.begin() + static_cast<std::ptrdiff_t>(adc_begin), obs.truth.end());
  for (TrueState& x : run.truth) x.t -= t_log0;
  return run;
}

}  // namespace rb::model
