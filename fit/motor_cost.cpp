// Grids and observation lists of the per-run cost functions.
#include <algorithm>
#include <cmath>

#include "fit/motor_cost.h"

namespace rb::fit::internal {

int RunModel::Interval(double t) const {
  if (nodes.empty() || t < nodes.front()) return -1;
  if (nodes.size() == 1) return 0;
  auto it = std::upper_bound(nodes.begin(), nodes.end(), t);
  const int k = static_cast<int>(it - nodes.begin()) - 1;
  return std::min(k, static_cast<int>(nodes.size()) - 2);
}

namespace {

void AddSegment(double a, double b, double h, bool conn, RunModel* m) {
  if (!(b > a)) return;
  const int n = std::max(1, static_cast<int>(std::ceil((b - a) / h - 1e-9)));
  const double hh = (b - a) / n;
  if (m->nodes.empty()) m->nodes.push_back(a);
  for (int k = 1; k <= n; ++k) {
    m->nodes.push_back(k == n ? b : a + k * hh);
    m->connected.push_back(conn ? 1 : 0);
  }
}

}  // namespace

namespace {

/// Observations for predictions: every sample, every channel the model predicts.
void PredictionObs(const PreparedRun& run, const std::vector<model::Sample>& samples, double cut,
                   RunModel* M) {
  using model::RunKind;
  M->obs.clear();
  size_t si = 0;  // position in run.speed (readings with their windows)
  for (size_t idx = 0; idx < samples.size(); ++idx) {
    const model::Sample& s = samples[idx];
    const int sample = static_cast<int>(idx);
    const bool conn = ConnectedAt(run, s.t);
    if (M->turning) {
      RunModel::Obs ob{Channel::kSpeed, s.t};
      while (si < run.speed.size() && run.speed[si].t < s.t) ++si;
      if (si < run.speed.size() && run.speed[si].t == s.t) ob.ta = run.speed[si].ta;
      ob.k = M->Interval(s.t);
      ob.ka = std::isnan(ob.ta) ? -1 : M->Interval(ob.ta);
      ob.sample = sample;
      M->obs.push_back(ob);
    }
    if (run.kind != RunKind::kGenerator) {
      RunModel::Obs ob{Channel::kCurrent, s.t};
      ob.connected = conn;
      ob.v = s.voltage;
      ob.k = M->Interval(s.t);
      ob.sample = sample;
      M->obs.push_back(ob);
    }
    if ((M->turning && !conn && run.kind == RunKind::kCoastDown && s.t >= cut) ||
        run.kind == RunKind::kGenerator) {
      RunModel::Obs ob{Channel::kVoltage, s.t};
      ob.k = M->Interval(s.t);
      ob.w_meas = run.kind == RunKind::kGenerator ? SpeedAt(run, s.t) : NAN;
      ob.sample = sample;
      M->obs.push_back(ob);
    }
  }
}

}  // namespace

RunModel BuildRunModel(const PreparedRun& run, const RunStart& start, const model::MotorParams& p,
                       const ModelFlags& flags, bool connected_part, double kappa,
                       const std::vector<model::Sample>* predict_at) {
  using model::RunKind;
  RunModel M;
  M.run = &run;
  M.kind = run.kind;
  M.kappa = kappa;
  M.nominal_v = run.nominal_voltage;
  M.use_vb = flags.vb;
  M.use_l = flags.l;
  M.use_heating = flags.heating;
  M.use_extra = flags.vb || flags.l || flags.heating;
  M.turning = run.kind == RunKind::kSpinUp || run.kind == RunKind::kCoastDown ||
              run.kind == RunKind::kSteady;
  M.spin_up = run.kind == RunKind::kSpinUp;
  M.smoothing.speed_rad_s = flags.friction_width;
  if (std::isfinite(run.ambient_C)) {
    M.alpha = 0.00393 / (1 + 0.00393 * (run.ambient_C - 20.0));
  }

  if (run.kind == RunKind::kGenerator) {
    if (predict_at) {
      PredictionObs(run, *predict_at, NAN, &M);
      return M;
    }
    for (const AdcObs& o : run.adc) {
      if (!std::isfinite(o.v) || o.transient) continue;
      const double w = SpeedAt(run, o.t);
      if (!std::isfinite(w)) continue;
      RunModel::Obs ob{Channel::kVoltage, o.t};
      ob.y = o.v;
      ob.w_meas = w;
      ob.n = o.n;
      M.obs.push_back(ob);
    }
    return M;
  }

  if (run.kind == RunKind::kLocked) {
    M.t_on_free = flags.l && run.on_lo < run.on_hi && !run.on_from_event;
    if (predict_at) {
      PredictionObs(run, *predict_at, NAN, &M);
      return M;
    }
    for (const AdcObs& o : run.adc) {
      if (!std::isfinite(o.i)) continue;
      if (!o.connected && !start.offset_free) continue;
      if (o.connected && o.transient && !flags.l) continue;
      RunModel::Obs ob{Channel::kCurrent, o.t};
      ob.y = o.i;
      ob.v = o.v;
      ob.connected = o.connected;
      ob.transient = o.transient;
      ob.n = o.n;
      M.obs.push_back(ob);
    }
    return M;
  }

  // ---- Turning runs: the grid.
  const double rr = p.R * kappa;
  const double tau_m = p.J * rr / (p.Ke * p.Ke + p.b * rr);
  double h = std::clamp(tau_m / 15.0, 2.5e-4, 0.02);
  double start_t = run.t_first, cut = NAN;
  const double end_t = run.t_last;
  if (M.spin_up) {
    start_t = std::isfinite(run.on_hi) ? run.on_hi : run.t_first;
    M.t_on_free = run.on_lo < run.on_hi && !run.on_from_event;
  } else if (run.kind == RunKind::kCoastDown) {
    cut = run.off;
    if (!run.off_from_event && std::isfinite(run.adc_dt) && cut > run.t_first) {
      cut = std::max(run.t_first, cut - 0.5 * run.adc_dt);
    }
    if (!std::isfinite(cut)) cut = run.t_first;
    if (!connected_part) start_t = cut;
  }
  h = std::min(h, std::max(1e-4, (end_t - start_t) / 20.0));
  if (run.kind == RunKind::kCoastDown && cut > start_t) {
    AddSegment(start_t, cut, h, true, &M);
    AddSegment(cut, end_t, h, false, &M);
  } else {
    AddSegment(start_t, end_t, h, run.kind != RunKind::kCoastDown, &M);
  }
  if (M.nodes.empty()) M.nodes.push_back(start_t);

  // Input voltage: driven samples averaged over ±h/4 around each evaluation time.
  std::vector<std::pair<double, double>> tv;
  for (const AdcObs& o : run.adc) {
    if (o.connected && std::isfinite(o.v)) tv.emplace_back(o.t, o.v);
  }
  auto v_at = [&](double tau, double half) {
    if (tv.empty()) return run.nominal_voltage;
    auto lo = std::lower_bound(tv.begin(), tv.end(), tau - half,
                               [](const auto& a, double x) { return a.first < x; });
    double s = 0;
    int n = 0;
    for (auto it = lo; it != tv.end() && it->first <= tau + half; ++it) s += it->second, ++n;
    if (n > 0) return s / n;
    auto it = std::lower_bound(tv.begin(), tv.end(), tau,
                               [](const auto& a, double x) { return a.first < x; });
    if (it == tv.end()) return tv.back().second;
    if (it == tv.begin()) return it->second;
    return (tau - (it - 1)->first < it->first - tau) ? (it - 1)->second : it->second;
  };
  M.v_input.resize(M.connected.size());
  for (size_t k = 0; k + 1 < M.nodes.size(); ++k) {
    const double a = M.nodes[k], b = M.nodes[k + 1], q = 0.25 * (b - a);
    M.v_input[k] = M.connected[k] ? std::array<double, 3>{v_at(a, q), v_at(0.5 * (a + b), q), v_at(b, q)}
                                  : std::array<double, 3>{0.0, 0.0, 0.0};
  }
  M.v_first = tv.empty() ? run.nominal_voltage : tv.front().second;

  if (predict_at) {
    PredictionObs(run, *predict_at, cut, &M);
    return M;
  }

  // ---- Observations: speed first, then current and voltage, each in time order.
  for (const SpeedObs& s : run.speed) {
    if (s.t < start_t && !M.spin_up) continue;
    if (M.spin_up && s.t < run.on_lo) continue;
    RunModel::Obs ob{Channel::kSpeed, s.t, s.ta};
    ob.y = s.y;
    ob.k = M.Interval(s.t);
    ob.ka = std::isnan(s.ta) ? -1 : M.Interval(s.ta);
    M.obs.push_back(ob);
  }
  for (const AdcObs& o : run.adc) {
    if (o.transient) continue;
    if (std::isfinite(o.i)) {
      const bool use = o.connected ? (connected_part || run.kind != RunKind::kCoastDown) && o.t >= start_t
                                   : start.offset_free;
      if (use) {
        RunModel::Obs ob{Channel::kCurrent, o.t};
        ob.y = o.i;
        ob.v = o.v;
        ob.connected = o.connected;
        ob.k = M.Interval(o.t);
        ob.n = o.n;
        M.obs.push_back(ob);
      }
    }
    if (std::isfinite(o.v) && !o.connected && run.kind == RunKind::kCoastDown && o.t >= cut) {
      RunModel::Obs ob{Channel::kVoltage, o.t};
      ob.y = o.v;
      ob.k = M.Interval(o.t);
      ob.n = o.n;
      M.obs.push_back(ob);
    }
  }
  return M;
}

void PlanSubsteps(RunModel* m, const double* core, const double* extra, const double* nuis) {
  if (!m->turning || m->nodes.size() < 2) return;
  std::vector<int> plan(m->nodes.size() - 1, 1);
  Weights w;
  w.inv_sigma.assign(m->obs.size(), 1.0);
  RunCost c{m, &w, nullptr, &plan};
  std::vector<double> r(m->obs.size());
  if (!c.Eval<double>(core, extra, nuis, r.data())) {
    // The trajectory diverged at these parameters: be generous everywhere.
    std::fill(plan.begin(), plan.end(), 8);
  }
  m->substeps = plan;
  if (m->spin_up && std::isfinite(m->run->on_lo) && std::isfinite(m->run->on_hi)) {
    // At rest the stiffness is that of the driven motor plus the friction sign's slope.
    const double R = std::exp(core[kLogR]) * m->kappa, Ke = std::exp(core[kLogKe]),
                 J = std::exp(core[kLogJ]), Tc = std::exp(core[kLogTc]),
                 b = std::exp(core[kLogB]);
    const double lam = (Ke * Ke / R + b) / J + Tc / (J * m->smoothing.speed_rad_s);
    const double hp = m->run->on_hi - m->run->on_lo;
    m->pre_substeps = std::clamp(static_cast<int>(std::ceil(2.0 * hp * lam / 0.5)), 2, 400);
  }
}

}  // namespace rb::fit::internal
