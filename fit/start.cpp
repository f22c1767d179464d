// Start values from closed forms, and the data-support checks.
#include "fit/start.h"

#include <Eigen/Dense>
#include <algorithm>
#include <fmt/format.h>

#include "model/closed_form.h"

namespace rb::fit::internal {
namespace {

using model::RunKind;

double Median(std::vector<double> v) {
  if (v.empty()) return NAN;
  const size_t n = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(n), v.end());
  return v[n];
}

/// Robust linear regression y ≈ X·β: least squares, then again without residuals beyond
/// 3 robust sigmas.
Eigen::VectorXd RobustRegression(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) {
  Eigen::VectorXd beta = X.colPivHouseholderQr().solve(y);
  for (int pass = 0; pass < 2; ++pass) {
    const Eigen::VectorXd r = y - X * beta;
    const double s = RangeScale(std::vector<double>(r.data(), r.data() + r.size()));
    if (!(s > 0)) break;
    std::vector<int> keep;
    for (int k = 0; k < r.size(); ++k) {
      if (std::fabs(r(k)) <= 3 * s) keep.push_back(k);
    }
    if (static_cast<int>(keep.size()) <= X.cols() + 2) break;
    Eigen::MatrixXd Xk(static_cast<int>(keep.size()), X.cols());
    Eigen::VectorXd yk(static_cast<int>(keep.size()));
    for (size_t j = 0; j < keep.size(); ++j) {
      Xk.row(static_cast<int>(j)) = X.row(keep[j]);
      yk(static_cast<int>(j)) = y(keep[j]);
    }
    beta = Xk.colPivHouseholderQr().solve(yk);
  }
  return beta;
}

double ObsVoltage(const PreparedRun& r, const AdcObs& o) {
  return std::isfinite(o.v) ? o.v : r.nominal_voltage;
}

/// Steady point at the end of a spin-up / start of a coast-down / a steady run.
struct SteadyPoint {
  double w = NAN, i = NAN, v = NAN;
};

}  // namespace

double SpeedAt(const PreparedRun& r, double t) {
  if (r.speed.empty()) return NAN;
  auto mid = [](const SpeedObs& s) { return std::isnan(s.ta) ? s.t : 0.5 * (s.ta + s.t); };
  if (t <= mid(r.speed.front())) return r.speed.front().y;
  if (t >= mid(r.speed.back())) return r.speed.back().y;
  auto it = std::lower_bound(r.speed.begin(), r.speed.end(), t,
                             [&](const SpeedObs& s, double x) { return mid(s) < x; });
  const SpeedObs& b = *it;
  const SpeedObs& a = *(it - 1);
  const double f = (t - mid(a)) / (mid(b) - mid(a));
  return a.y + f * (b.y - a.y);
}

StartValues EstimateStart(const std::vector<PreparedRun>& runs, bool want_brush) {
  StartValues sv;
  sv.runs.resize(runs.size());
  std::vector<double> levels;

  // ---- Current offsets (open-circuit samples) and driven voltage levels.
  for (size_t k = 0; k < runs.size(); ++k) {
    const PreparedRun& r = runs[k];
    RunStart& rs = sv.runs[k];
    std::vector<double> open_i, driven_v;
    for (const AdcObs& o : r.adc) {
      if (o.transient) continue;
      if (!o.connected && std::isfinite(o.i)) open_i.push_back(o.i);
      if (o.connected) driven_v.push_back(ObsVoltage(r, o));
    }
    if (open_i.size() >= 5) {
      rs.i_offset = Median(open_i);
      rs.offset_free = true;
    }
    rs.v_level = Median(driven_v);
    if (r.has_current && std::isfinite(rs.v_level) && r.kind != RunKind::kGenerator) {
      levels.push_back(std::fabs(rs.v_level));
    }
    rs.t_on = std::isfinite(r.on_lo) ? 0.5 * (r.on_lo + r.on_hi) : NAN;
  }
  std::sort(levels.begin(), levels.end());
  for (size_t k = 0; k < levels.size(); ++k) {
    if (k == 0 || levels[k] > 1.15 * levels[k - 1]) ++sv.voltage_levels;
  }

  // ---- Locked rotor: R_k per position; heating drift; current rise.
  std::vector<double> rk;
  for (size_t k = 0; k < runs.size(); ++k) {
    const PreparedRun& r = runs[k];
    RunStart& rs = sv.runs[k];
    if (r.kind != RunKind::kLocked || !r.has_current) continue;
    std::vector<double> ratio, tt;
    for (const AdcObs& o : r.adc) {
      const double i = o.i - rs.i_offset;
      if (!o.connected || o.transient || !std::isfinite(i) || std::fabs(i) < 1e-6) continue;
      const double v = ObsVoltage(r, o);
      if (!std::isfinite(v)) continue;
      ratio.push_back(v / i);
      tt.push_back(o.t);
    }
    if (ratio.size() < 3) continue;
    rs.r_locked = Median(ratio);
    rk.push_back(rs.r_locked);
    if (ratio.size() >= 10) {
      Eigen::MatrixXd X(static_cast<int>(ratio.size()), 2);
      Eigen::VectorXd y(static_cast<int>(ratio.size()));
      for (size_t j = 0; j < ratio.size(); ++j) {
        X(static_cast<int>(j), 0) = 1;
        X(static_cast<int>(j), 1) = tt[j] - tt.front();
        y(static_cast<int>(j)) = ratio[j];
      }
      const Eigen::VectorXd beta = X.colPivHouseholderQr().solve(y);
      const Eigen::VectorXd res = y - X * beta;
      const double s2 = res.squaredNorm() / std::max(1.0, static_cast<double>(ratio.size()) - 2);
      const Eigen::MatrixXd cov = s2 * (X.transpose() * X).inverse();
      const double span = tt.back() - tt.front();
      rs.r_drift = beta(1) * span / rs.r_locked;
      rs.r_drift_se = std::sqrt(cov(1, 1)) * span / rs.r_locked;
      if (rs.r_drift > 0.005 && rs.r_drift > 5 * rs.r_drift_se) {
        sv.heating_seen = true;
        double p_mean = 0;
        int np = 0;
        for (const AdcObs& o : r.adc) {
          if (o.connected && !o.transient && std::isfinite(o.i)) {
            p_mean += (o.i - rs.i_offset) * (o.i - rs.i_offset) * rs.r_locked;
            ++np;
          }
        }
        p_mean /= std::max(1, np);
        // dR/dt / R = α·P/C  →  1/C = (dR/dt / R) / (α·P)
        const double inv_c = beta(1) / rs.r_locked / (0.00393 * std::max(p_mean, 1e-9));
        sv.inv_heat_capacity = std::max(sv.inv_heat_capacity, inv_c);
      }
    }
    if (r.rise_samples >= 3 && std::isfinite(r.rise_end)) {
      sv.l_resolved = true;
      rs.rise_tau = (r.rise_end - r.on_hi) / 4.0;  // ~98 % after 4 time constants
    }
  }
  for (const PreparedRun& r : runs) {
    if (r.kind != RunKind::kLocked && r.rise_samples >= 3) sv.l_resolved = true;
  }
  sv.locked_positions = static_cast<int>(rk.size());
  if (!rk.empty()) {
    double am = 0, inv = 0;
    for (double x : rk) am += x, inv += 1.0 / x;
    am /= static_cast<double>(rk.size());
    inv /= static_cast<double>(rk.size());
    sv.locked_mean = am;
    // Position spread: sample SD of log R_k pooled with a prior of 8 % on 2 degrees of
    // freedom (commutator resistance varies by roughly ±10 % with position on small 3- and
    // 5-segment motors: common practice, no source).
    const double prior = 0.08, prior_dof = 2;
    double ss = 0;
    for (double x : rk) ss += std::pow(std::log(x / am), 2);
    const double dof = static_cast<double>(rk.size()) - 1;
    sv.position_spread =
        std::sqrt((ss + prior_dof * prior * prior) / (dof + prior_dof));
    if (rk.size() >= 3) {
      // While turning, the current sees the commutator's resistance averaged as a
      // conductance (harmonic mean, κ_h = HM/AM) when L/R is short against the time a brush
      // bridges two segments, and as a resistance (arithmetic mean, κ = 1) when it is long;
      // which applies depends on L and speed. Take the middle of [κ_h, 1] with a rectangular
      // uncertainty (GUM type B), plus the jackknife uncertainty of κ_h over the positions.
      const double kh = 1.0 / (inv * am);
      sv.kappa = 0.5 * (1.0 + kh);
      // Jackknife standard error over the positions.
      std::vector<double> loo;
      for (size_t j = 0; j < rk.size(); ++j) {
        double a = 0, b = 0;
        for (size_t m = 0; m < rk.size(); ++m) {
          if (m != j) a += rk[m], b += 1.0 / rk[m];
        }
        const double n1 = static_cast<double>(rk.size() - 1);
        loo.push_back(1.0 / ((a / n1) * (b / n1)));
      }
      double mean = 0;
      for (double x : loo) mean += x;
      mean /= static_cast<double>(loo.size());
      double var = 0;
      for (double x : loo) var += (x - mean) * (x - mean);
      const double n = static_cast<double>(rk.size());
      const double u_jack = 0.5 * std::sqrt((n - 1) / n * var);
      const double u_range = (1.0 - kh) / std::sqrt(12.0);
      sv.kappa_u = std::sqrt(u_jack * u_jack + u_range * u_range);
    }
  }

  // ---- Driven, turning: V − Vb = R·i + Ke·ω.
  std::vector<std::array<double, 3>> rows;  // v, i, w
  for (size_t k = 0; k < runs.size(); ++k) {
    const PreparedRun& r = runs[k];
    if (r.kind != RunKind::kSpinUp || !r.has_current || !r.has_speed || r.speed.empty()) continue;
    // Only where the speed readings bracket the sample: before the first reading's window
    // the speed is unknown (it rises from zero), and extrapolating it biases R low.
    const SpeedObs& first = r.speed.front();
    const double t_known = std::isnan(first.ta) ? first.t : 0.5 * (first.ta + first.t);
    for (const AdcObs& o : r.adc) {
      if (!o.connected || o.transient || !std::isfinite(o.i) || o.t < t_known) continue;
      const double v = ObsVoltage(r, o);
      const double w = SpeedAt(r, o.t);
      if (!std::isfinite(v) || !std::isfinite(w)) continue;
      rows.push_back({v, o.i - sv.runs[k].i_offset, w});
    }
  }
  double r_rot = NAN, ke = NAN, vb = 0;
  if (rows.size() >= 10) {
    const bool three = want_brush && sv.voltage_levels >= 2;
    Eigen::MatrixXd X(static_cast<int>(rows.size()), three ? 3 : 2);
    Eigen::VectorXd y(static_cast<int>(rows.size()));
    for (size_t j = 0; j < rows.size(); ++j) {
      const int jj = static_cast<int>(j);
      X(jj, 0) = rows[j][1];
      X(jj, 1) = rows[j][2];
      if (three) X(jj, 2) = 1.0;
      y(jj) = rows[j][0];
    }
    const Eigen::VectorXd beta = RobustRegression(X, y);
    if (beta(0) > 0 && beta(1) > 0) {
      r_rot = beta(0);
      ke = beta(1);
      if (three) vb = std::clamp(beta(2), 0.0, 0.2 * levels.back());
      sv.r_supported = true;
      sv.ke_supported = true;
      sv.notes.push_back(fmt::format(
          "R and Ke: regression of V = R·i + Ke·ω{} over {} driven samples", three ? " + Vb" : "",
          rows.size()));
    }
  }
  if (!rk.empty()) sv.r_supported = true;

  // ---- Open circuit: Ke = V/ω.
  if (!std::isfinite(ke)) {
    std::vector<double> ratio;
    for (const PreparedRun& r : runs) {
      if (!r.has_voltage || !r.has_speed) continue;
      if (r.kind != RunKind::kCoastDown && r.kind != RunKind::kGenerator) continue;
      double wmax = 0;
      for (const SpeedObs& s : r.speed) wmax = std::max(wmax, std::fabs(s.y));
      for (const AdcObs& o : r.adc) {
        if (o.connected || o.transient || !std::isfinite(o.v)) continue;
        const double w = SpeedAt(r, o.t);
        if (std::fabs(w) > 0.2 * wmax) ratio.push_back(o.v / w);
      }
    }
    if (ratio.size() >= 5) {
      ke = Median(ratio);
      sv.ke_supported = true;
      sv.notes.push_back(fmt::format("Ke: open-circuit V/ω over {} samples", ratio.size()));
    }
  }

  // ---- Resistance: rotating value over the commutator factor, else the locked mean.
  double R = NAN;
  if (std::isfinite(r_rot)) {
    R = r_rot / sv.kappa;
  } else if (std::isfinite(sv.locked_mean)) {
    R = sv.locked_mean;
    sv.notes.push_back(fmt::format("R: mean of {} locked-rotor positions", rk.size()));
  }

  // ---- Steady points.
  std::vector<SteadyPoint> steady;
  for (size_t k = 0; k < runs.size(); ++k) {
    const PreparedRun& r = runs[k];
    if (!r.has_speed || r.speed.size() < 10) continue;
    std::vector<double> w, i, v;
    if (r.kind == RunKind::kSpinUp || r.kind == RunKind::kSteady) {
      const double from = r.kind == RunKind::kSteady ? r.t_first : r.t_first + 0.8 * (r.t_last - r.t_first);
      for (const SpeedObs& s : r.speed) {
        if (s.t >= from) w.push_back(s.y);
      }
      for (const AdcObs& o : r.adc) {
        if (o.t >= from && o.connected && !o.transient) {
          if (std::isfinite(o.i)) i.push_back(o.i - sv.runs[k].i_offset);
          v.push_back(ObsVoltage(r, o));
        }
      }
    } else if (r.kind == RunKind::kCoastDown && std::isfinite(r.off) && r.off > r.t_first) {
      for (const SpeedObs& s : r.speed) {
        if (s.t < r.off) w.push_back(s.y);
      }
      for (const AdcObs& o : r.adc) {
        if (o.connected && !o.transient) {
          if (std::isfinite(o.i)) i.push_back(o.i - sv.runs[k].i_offset);
          v.push_back(ObsVoltage(r, o));
        }
      }
    }
    if (w.size() >= 3) steady.push_back({Median(w), Median(i), Median(v)});
  }

  // ---- Ke without voltage: V ≈ Ke·ω at no load (R·I0 neglected).
  if (!std::isfinite(ke)) {
    for (const SteadyPoint& s : steady) {
      if (std::isfinite(s.v) && s.w > 0) {
        ke = s.v / s.w;
        sv.notes.push_back("Ke: no-load V/ω (rough)");
        break;
      }
    }
  }
  if (!std::isfinite(ke)) ke = 0.01;
  if (!std::isfinite(R)) R = 1.0;

  // ---- J from the spin-up rise time.
  double J = NAN;
  for (size_t k = 0; k < runs.size() && !std::isfinite(J); ++k) {
    const PreparedRun& r = runs[k];
    if (r.kind != RunKind::kSpinUp || r.speed.size() < 10) continue;
    std::vector<double> tail;
    for (const SpeedObs& s : r.speed) {
      if (s.t > r.t_first + 0.8 * (r.t_last - r.t_first)) tail.push_back(s.y);
    }
    const double wf = Median(tail);
    if (!(wf > 0)) continue;
    const double t0 = std::isfinite(sv.runs[k].t_on) ? sv.runs[k].t_on : r.t_first;
    // Earliest time at which the speed could have reached 63.2 %.
    for (size_t j = 1; j < r.speed.size(); ++j) {
      if (r.speed[j].y >= 0.632 * wf) {
        const double ta = 0.5 * ((std::isnan(r.speed[j - 1].ta) ? r.speed[j - 1].t : r.speed[j - 1].ta) + r.speed[j - 1].t);
        const double tb = std::isnan(r.speed[j].ta) ? r.speed[j].t : 0.5 * (r.speed[j].ta + r.speed[j].t);
        const double ya = r.speed[j - 1].y, yb = r.speed[j].y;
        const double t63 = yb > ya ? ta + (0.632 * wf - ya) / (yb - ya) * (tb - ta) : tb;
        const double tau = t63 - t0;
        if (tau > 0) {
          J = tau * ke * ke / (R * sv.kappa);
          sv.notes.push_back(fmt::format("J: spin-up 63 % rise time {:.4g} s", tau));
        }
        break;
      }
    }
  }

  // ---- Coast-down deceleration: dω/dt = −c − d·ω.
  double c = NAN, d = NAN, w_cd = NAN;
  {
    std::vector<std::array<double, 2>> pts;  // ω, dω/dt
    for (const PreparedRun& r : runs) {
      if (r.kind != RunKind::kCoastDown || r.speed.size() < 20) continue;
      std::vector<const SpeedObs*> after;
      for (const SpeedObs& s : r.speed) {
        if (s.t > r.off) after.push_back(&s);
      }
      const size_t step = std::max<size_t>(3, after.size() / 40);
      for (size_t j = step; j + step < after.size(); j += step) {
        const SpeedObs& a = *after[j - step];
        const SpeedObs& b = *after[j + step];
        if (a.y <= 0 || b.y <= 0) continue;
        pts.push_back({after[j]->y, (b.y - a.y) / (b.t - a.t)});
      }
      if (!after.empty()) w_cd = std::max(std::isfinite(w_cd) ? w_cd : 0.0, after.front()->y);
    }
    if (pts.size() >= 6) {
      Eigen::MatrixXd X(static_cast<int>(pts.size()), 2);
      Eigen::VectorXd y(static_cast<int>(pts.size()));
      for (size_t j = 0; j < pts.size(); ++j) {
        X(static_cast<int>(j), 0) = -1.0;
        X(static_cast<int>(j), 1) = -pts[j][0];
        y(static_cast<int>(j)) = pts[j][1];
      }
      const Eigen::VectorXd beta = RobustRegression(X, y);
      c = beta(0);
      d = beta(1);
      sv.notes.push_back(fmt::format("Tc/J and b/J: coast-down deceleration against speed ({} points)", pts.size()));
    }
  }

  // ---- Friction from steady points (Kt·I0 = Tc + b·ω0) and/or the coast-down shape.
  double Tc = NAN, b = NAN;
  std::vector<SteadyPoint> withI;
  for (const SteadyPoint& s : steady) {
    if (std::isfinite(s.i) && s.w > 0) withI.push_back(s);
  }
  if (!std::isfinite(J) && std::isfinite(c) && !withI.empty() && c > 0) {
    // Coast-down from a steady point: J·(c + d·ω0) = Kt·I0.
    const SteadyPoint& s = withI.front();
    const double decel = c + (std::isfinite(d) ? d : 0) * s.w;
    if (decel > 0 && s.i > 0) {
      J = ke * s.i / decel;
      sv.notes.push_back("J: steady torque Kt·I0 over the coast-down deceleration");
    }
  }
  if (std::isfinite(J) && std::isfinite(c) && c > 0) {
    Tc = J * c;
    b = std::isfinite(d) && d > 0 ? J * d : NAN;
  }
  if (!std::isfinite(Tc) || !std::isfinite(b)) {
    std::vector<SteadyPoint> distinct;
    for (const SteadyPoint& s : withI) {
      bool dup = false;
      for (const SteadyPoint& q : distinct) dup = dup || std::fabs(s.w / q.w - 1) < 0.15;
      if (!dup) distinct.push_back(s);
    }
    if (distinct.size() >= 2) {
      Eigen::MatrixXd X(static_cast<int>(distinct.size()), 2);
      Eigen::VectorXd y(static_cast<int>(distinct.size()));
      for (size_t j = 0; j < distinct.size(); ++j) {
        X(static_cast<int>(j), 0) = 1;
        X(static_cast<int>(j), 1) = distinct[j].w;
        y(static_cast<int>(j)) = ke * distinct[j].i;
      }
      const Eigen::VectorXd beta = X.colPivHouseholderQr().solve(y);
      if (!std::isfinite(Tc) && beta(0) > 0) Tc = beta(0);
      if (!std::isfinite(b) && beta(1) > 0) b = beta(1);
    } else if (distinct.size() == 1) {
      const double T = ke * distinct[0].i;
      if (T > 0) {
        if (!std::isfinite(Tc)) Tc = 0.7 * T;
        if (!std::isfinite(b)) b = 0.3 * T / distinct[0].w;
      }
    }
  }
  // Fallbacks keep every start value positive and of a plausible size.
  double wmax = 1;
  for (const PreparedRun& r : runs) {
    for (const SpeedObs& s : r.speed) wmax = std::max(wmax, std::fabs(s.y));
  }
  double vmax = 1;
  for (double l : levels) vmax = std::max(vmax, l);
  const double stall_torque = ke * vmax / R;
  if (!std::isfinite(Tc) || Tc <= 0) Tc = 0.02 * stall_torque;
  if (!std::isfinite(b) || b <= 0) b = 0.3 * Tc / wmax;
  if (!std::isfinite(J) || J <= 0) {
    J = 0.05 * ke * ke / R;  // τm ≈ 50 ms, typical of small motors (common practice, no source)
    sv.notes.push_back("J: no spin-up to time; started from τm = 50 ms");
  }
  sv.p.R = R;
  sv.p.Ke = ke;
  sv.p.J = J;
  sv.p.Tc = Tc;
  sv.p.b = b;
  sv.p.Vb = want_brush ? std::max(vb, 0.05) : 0.0;
  double tau_e = NAN;
  for (const RunStart& rs : sv.runs) {
    if (std::isfinite(rs.rise_tau)) tau_e = rs.rise_tau;
  }
  sv.p.L = std::isfinite(tau_e) ? tau_e * R : 1e-4 * R;

  // ---- Per-run nuisance starts.
  for (size_t k = 0; k < runs.size(); ++k) {
    const PreparedRun& r = runs[k];
    RunStart& rs = sv.runs[k];
    if (r.kind == RunKind::kCoastDown || r.kind == RunKind::kSteady) {
      const double t0 = (r.kind == RunKind::kCoastDown && !sv.r_supported) ? r.off : r.t_first;
      rs.w0 = SpeedAt(r, t0);
      if (!std::isfinite(rs.w0)) rs.w0 = 0;
    }
  }
  (void)w_cd;
  return sv;
}

}  // namespace rb::fit::internal
