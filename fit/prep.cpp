// Runs → observation lists: validation, switch times, tach windows, ADC bins.
#include "fit/prep.h"

#include <algorithm>
#include <fmt/format.h>
#include <numbers>

namespace rb::fit::internal {
namespace {

double Median(std::vector<double> v) {
  if (v.empty()) return NAN;
  const size_t n = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(n), v.end());
  double m = v[n];
  if (v.size() % 2 == 0) {
    m = 0.5 * (m + *std::max_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(n)));
  }
  return m;
}

double Quantile(std::vector<double> v, double q) {
  if (v.empty()) return NAN;
  const size_t k = std::min(v.size() - 1, static_cast<size_t>(q * static_cast<double>(v.size())));
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(k), v.end());
  return v[k];
}

struct Series {
  std::vector<double> t, y;
};

Series Channel(const std::vector<model::Sample>& s, double model::Sample::*field) {
  Series out;
  for (const model::Sample& x : s) {
    if (!std::isnan(x.*field)) {
      out.t.push_back(x.t);
      out.y.push_back(x.*field);
    }
  }
  return out;
}

/// First index at or after `from` where pred holds for this and the next `hold` samples.
template <typename P>
size_t FirstHolding(const Series& s, size_t from, int hold, P pred) {
  for (size_t k = from; k < s.y.size(); ++k) {
    bool ok = true;
    for (size_t j = k; j < std::min(s.y.size(), k + static_cast<size_t>(hold) + 1); ++j) {
      ok = ok && pred(s.y[j]);
    }
    if (ok) return k;
  }
  return s.y.size();
}

void FindSwitchOn(const RunData& run, const Series& V, const Series& I, PreparedRun* p) {
  if (!run.output_on_s.empty()) {
    p->on_lo = p->on_hi = run.output_on_s.front();
    p->on_from_event = true;
    return;
  }
  if (V.y.size() >= 4) {
    std::vector<double> a(V.y.size());
    for (size_t k = 0; k < a.size(); ++k) a[k] = std::fabs(V.y[k]);
    const double level = Quantile(a, 0.9);
    const double thr = 0.5 * level;
    const size_t j = FirstHolding(V, 0, 1, [thr](double v) { return std::fabs(v) > thr; });
    if (j < V.y.size() && level > 8 * p->sigma_voltage) {
      p->on_hi = V.t[j];
      p->on_lo = j > 0 ? V.t[j - 1] : V.t[j];
      return;
    }
  }
  if (I.y.size() >= 4) {
    const double base = Median(std::vector<double>(I.y.begin(), I.y.begin() + std::min<size_t>(5, I.y.size())));
    std::vector<double> a(I.y.size());
    for (size_t k = 0; k < a.size(); ++k) a[k] = std::fabs(I.y[k] - base);
    const double level = Quantile(a, 0.95);
    const double thr = std::max(0.3 * level, 6 * p->sigma_current);
    const size_t j = FirstHolding(I, 0, 1, [&](double v) { return std::fabs(v - base) > thr; });
    if (j < I.y.size()) {
      p->on_hi = I.t[j];
      p->on_lo = j > 0 ? I.t[j - 1] : I.t[j];
      return;
    }
  }
  // Speed only: the output closed before the first mark of the first reading.
  p->on_lo = p->t_first;
  p->on_hi = p->t_first;
  if (!p->speed.empty()) {
    const SpeedObs& s = p->speed.front();
    p->on_hi = std::max(p->t_first, std::isnan(s.ta) ? s.t - 1e-3 : s.ta);
  }
}

/// First time after `after` at which the circuit is open (coast-down cut, end of a pulse).
void FindSwitchOff(const RunData& run, const Series& V, const Series& I, double after,
                   PreparedRun* p) {
  for (double t : run.output_off_s) {
    if (t >= after) {
      p->off = t;
      p->off_from_event = true;
      return;
    }
  }
  if (I.y.size() >= 8) {
    // The open-circuit level is where the run ends; the driven level where it starts.
    const size_t n = I.y.size();
    const double open = Median(std::vector<double>(I.y.end() - static_cast<std::ptrdiff_t>(std::max<size_t>(3, n / 10)), I.y.end()));
    size_t k0 = 0;
    while (k0 < n && I.t[k0] < after) ++k0;
    if (k0 >= n) return;
    const double driven = Median(std::vector<double>(I.y.begin() + static_cast<std::ptrdiff_t>(k0), I.y.begin() + static_cast<std::ptrdiff_t>(std::min(n, k0 + 10))));
    const double step = std::fabs(driven - open);
    if (step > 6 * p->sigma_current) {
      const size_t j = FirstHolding(I, k0, 3, [&](double v) { return std::fabs(v - open) < 0.5 * step; });
      if (j < n) {
        p->off = I.t[j];
        return;
      }
    } else if (p->kind == model::RunKind::kCoastDown) {
      p->off = I.t[k0];  // no driven part logged: open from the start
      return;
    }
  }
  if (V.y.size() >= 8 && p->kind == model::RunKind::kLocked) {
    std::vector<double> a(V.y.size());
    for (size_t k = 0; k < a.size(); ++k) a[k] = std::fabs(V.y[k]);
    const double thr = 0.5 * Quantile(a, 0.9);
    size_t k0 = 0;
    while (k0 < V.t.size() && V.t[k0] <= after) ++k0;
    const size_t j = FirstHolding(V, k0, 2, [thr](double v) { return std::fabs(v) < thr; });
    if (j < V.y.size()) p->off = V.t[j];
    return;
  }
  if (p->kind == model::RunKind::kCoastDown && !p->speed.empty()) {
    // Speed only: the cut is where the speed leaves its starting plateau.
    std::vector<double> first;
    for (size_t k = 0; k < std::min<size_t>(5, p->speed.size()); ++k) first.push_back(p->speed[k].y);
    const double plateau = Median(first);
    const double drop = std::max(5 * p->sigma_speed, 0.002 * std::fabs(plateau));
    for (size_t k = 0; k < p->speed.size(); ++k) {
      if (std::fabs(p->speed[k].y) < std::fabs(plateau) - drop) {
        p->off = k > 0 ? p->speed[k - 1].t : p->t_first;
        return;
      }
    }
    p->off = p->t_first;
  }
}

}  // namespace

double RobustScale(std::vector<double> v) {
  if (v.empty()) return NAN;
  const double m = Median(v);
  for (double& x : v) x = std::fabs(x - m);
  return 1.4826 * Median(std::move(v));
}

double RangeScale(std::vector<double> v) {
  if (v.size() < 5) return RobustScale(std::move(v));
  return (Quantile(v, 0.9) - Quantile(v, 0.1)) / 2.5631;
}

double NoiseFromSecondDifferences(const std::vector<double>& v) {
  if (v.size() < 5) return NAN;
  std::vector<double> d;
  d.reserve(v.size());
  for (size_t k = 2; k < v.size(); ++k) d.push_back(v[k] - 2 * v[k - 1] + v[k - 2]);
  return RobustScale(std::move(d)) / std::sqrt(6.0);
}

Result<PreparedRun> PrepareRun(const RunData& run) {
  const std::string name = fmt::format("run {}", run.id);
  if (run.samples.empty()) return Status::InvalidArgument(name + ": no samples");
  PreparedRun p;
  p.id = run.id;
  p.kind = run.kind;
  p.nominal_voltage = run.nominal_voltage.value_or(NAN);
  p.ambient_C = run.ambient_C.value_or(NAN);
  if (run.calibration) {
    p.calibration = *run.calibration;
    p.calibration_declared = true;
  }
  for (size_t k = 0; k < run.samples.size(); ++k) {
    const model::Sample& s = run.samples[k];
    if (!std::isfinite(s.t)) {
      return Status::InvalidArgument(fmt::format(
          "{}: sample {}: time is not a finite number; expected seconds since the run started",
          name, k + 1));
    }
    // Two instruments may read at the same instant (the logger never reorders): equal
    // times are fine, a step back in time is not.
    if (k > 0 && s.t < run.samples[k - 1].t) {
      return Status::InvalidArgument(fmt::format(
          "{}: sample {}: time {} s is before {} s; expected non-decreasing time", name,
          k + 1, s.t, run.samples[k - 1].t));
    }
    for (auto [v, what] : {std::pair{s.speed, "speed"}, std::pair{s.current, "current"},
                           std::pair{s.voltage, "voltage"}}) {
      if (std::isinf(v)) {
        return Status::InvalidArgument(
            fmt::format("{}: sample {}: {} reading is infinite; expected a number or no reading",
                        name, k + 1, what));
      }
    }
    if (model::HasSpeed(s)) ++p.raw_speed;
    if (model::HasCurrent(s)) ++p.raw_current;
    if (model::HasVoltage(s)) ++p.raw_voltage;
  }
  if (p.raw_speed + p.raw_current + p.raw_voltage == 0) {
    return Status::InvalidArgument(name + ": every reading is empty (NaN); nothing to fit");
  }
  p.has_speed = p.raw_speed > 0;
  p.has_current = p.raw_current > 0;
  p.has_voltage = p.raw_voltage > 0;
  p.t_first = run.samples.front().t;
  p.t_last = run.samples.back().t;

  const Series W = Channel(run.samples, &model::Sample::speed);
  const Series I = Channel(run.samples, &model::Sample::current);
  const Series V = Channel(run.samples, &model::Sample::voltage);
  p.sigma_current = NoiseFromSecondDifferences(I.y);
  p.sigma_voltage = NoiseFromSecondDifferences(V.y);
  {
    std::vector<double> dt;
    const Series& A = I.t.size() >= V.t.size() ? I : V;
    for (size_t k = 1; k < A.t.size(); ++k) dt.push_back(A.t[k] - A.t[k - 1]);
    p.adc_dt = Median(dt);
  }

  // ---- Tach: windows and pitch.
  std::vector<double> implied;
  for (size_t k = 1; k < W.y.size(); ++k) {
    if (W.y[k] != 0 && W.y[k - 1] != 0) implied.push_back(std::fabs(W.y[k]) * (W.t[k] - W.t[k - 1]));
  }
  if (run.marks_per_rev > 0) p.pitch = 2 * std::numbers::pi / run.marks_per_rev;
  const double pitch_guess = std::isfinite(p.pitch) ? p.pitch : Median(implied);
  if (implied.size() >= 5 && std::isfinite(pitch_guess) && pitch_guess > 0) {
    size_t close = 0;
    for (double x : implied) close += std::fabs(x / pitch_guess - 1) < 0.01;
    p.period_tach = close >= 0.7 * static_cast<double>(implied.size());
    if (p.period_tach) p.pitch = pitch_guess;
  }
  std::vector<double> nonzero;
  for (size_t k = 0; k < W.y.size(); ++k) {
    if (W.y[k] == 0) {
      ++p.zero_speed;
      continue;
    }
    SpeedObs o{W.t[k], W.y[k], NAN};
    if (k > 0 && W.y[k - 1] != 0) {
      o.ta = W.t[k - 1];
    } else if (p.period_tach && std::isfinite(p.pitch)) {
      o.ta = W.t[k] - p.pitch / std::fabs(W.y[k]);
    }
    p.speed.push_back(o);
    nonzero.push_back(W.y[k]);
  }
  p.sigma_speed = NoiseFromSecondDifferences(nonzero);

  // ---- Switch times.
  using model::RunKind;
  switch (p.kind) {
    case RunKind::kSpinUp:
    case RunKind::kLoaded:
      FindSwitchOn(run, V, I, &p);
      break;
    case RunKind::kLocked:
      FindSwitchOn(run, V, I, &p);
      FindSwitchOff(run, V, I, p.on_hi, &p);
      break;
    case RunKind::kCoastDown:
      FindSwitchOff(run, V, I, p.t_first, &p);
      if (std::isnan(p.off)) p.off = p.t_first;
      break;
    case RunKind::kSteady:
      p.on_lo = p.on_hi = p.t_first;
      break;
    default:
      break;
  }
  // ---- The electrical switch-on transient, from the current.
  if (std::isfinite(p.on_hi) && I.y.size() >= 4) {
    size_t k0 = 0;
    while (k0 < I.t.size() && I.t[k0] < p.on_hi) ++k0;
    const double end = std::isfinite(p.off) ? p.off : INFINITY;
    std::vector<size_t> on;
    for (size_t k = k0; k < I.t.size() && I.t[k] < end; ++k) on.push_back(k);
    if (on.size() >= 4) {
      double level = 0;
      size_t settle = on.front();
      if (p.kind == RunKind::kLocked) {
        std::vector<double> mid;
        for (size_t j = on.size() / 4; j < 3 * on.size() / 4; ++j) mid.push_back(I.y[on[j]]);
        level = Median(mid);
        const double tol = std::max(0.01 * std::fabs(level), 3 * p.sigma_current);
        for (size_t k : on) {
          settle = k;
          if (std::fabs(I.y[k] - level) < tol) break;
        }
      } else {
        // Spin-up: the current peaks when the electrical transient is over, then falls
        // as the motor speeds up. Look within the first 30 samples.
        size_t best = on.front();
        for (size_t j = 0; j < std::min<size_t>(30, on.size()); ++j) {
          if (I.y[on[j]] > I.y[best]) best = on[j];
        }
        level = I.y[best];
        settle = best;
      }
      p.rise_end = I.t[settle];
      for (size_t k : on) {
        if (I.t[k] >= p.rise_end) break;
        const double f = level != 0 ? I.y[k] / level : 0;
        if (f > 0.1 && f < 0.9) ++p.rise_samples;
      }
    }
  }
  BinAdc(run, PrepOptions{}, &p);
  return p;
}

bool ConnectedAt(const PreparedRun& p, double t) {
  using model::RunKind;
  switch (p.kind) {
    case RunKind::kSpinUp:
    case RunKind::kLoaded:
      return std::isfinite(p.on_hi) && t >= p.on_hi;
    case RunKind::kCoastDown:
      return std::isfinite(p.off) && t < p.off;
    case RunKind::kLocked:
      return std::isfinite(p.on_hi) && t >= p.on_hi && (std::isnan(p.off) || t < p.off);
    case RunKind::kSteady:
      return true;
    default:
      return false;
  }
}

void BinAdc(const RunData& run, const PrepOptions& options, PreparedRun* p) {
  using model::RunKind;
  p->adc.clear();
  auto connected_at = [p](double t) { return ConnectedAt(*p, t); };
  auto transient_at = [&](double t) {
    if (std::isfinite(p->on_hi) && t >= p->on_hi) {
      if (std::isfinite(p->rise_end) && t <= p->rise_end) return true;
      if (t < p->on_hi + options.guard_seconds) return true;
    }
    return false;
  };
  // The first open-circuit sample after a cut may still carry the collapsing current.
  double first_open_after_off = NAN;
  if (std::isfinite(p->off)) {
    for (const model::Sample& s : run.samples) {
      if (s.t >= p->off && (model::HasCurrent(s) || model::HasVoltage(s))) {
        first_open_after_off = s.t;
        break;
      }
    }
  }

  std::vector<const model::Sample*> bin;
  // A bin's value is the plain mean: the commutator ripple is far larger than the noise
  // and must be averaged, not screened. A spike shifts its bin's mean, and the bin is then
  // set aside as a whole by the outlier test of the fit.
  auto flush = [&](bool conn) {
    if (bin.empty()) return;
    AdcObs o;
    o.connected = conn;
    o.n = static_cast<int>(bin.size());
    double st = 0, si = 0, sv = 0;
    int ni = 0, nv = 0;
    for (const model::Sample* s : bin) {
      st += s->t;
      if (model::HasCurrent(*s)) si += s->current, ++ni;
      if (model::HasVoltage(*s)) sv += s->voltage, ++nv;
    }
    o.t = st / o.n;
    o.i = ni ? si / ni : NAN;
    o.v = nv ? sv / nv : NAN;
    p->adc.push_back(o);
    bin.clear();
  };
  bool bin_conn = false;
  for (const model::Sample& s : run.samples) {
    if (!model::HasCurrent(s) && !model::HasVoltage(s)) continue;
    const bool conn = connected_at(s.t);
    const bool trans = transient_at(s.t) || s.t == first_open_after_off;
    if (trans) {
      flush(bin_conn);
      AdcObs o{s.t, s.current, s.voltage, 1, conn, true};
      p->adc.push_back(o);
      continue;
    }
    if (!bin.empty() &&
        (conn != bin_conn || options.bin_seconds <= 0 || s.t - bin.front()->t >= options.bin_seconds)) {
      flush(bin_conn);
    }
    bin_conn = conn;
    bin.push_back(&s);
  }
  flush(bin_conn);
}

}  // namespace rb::fit::internal
