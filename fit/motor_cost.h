// rotorbench fit (internal): residuals of one run for a parameter set (output error).
//
// Parameters as the solver sees them (logs keep them positive and well scaled):
//   core  [log R, log Ke, log J, log Tc, log b]            shared by all runs
//   extra [Vb, log L, log(1/C_th)]                         shared; only with those terms
//     Vb is linear and unbounded: a bound at 0 (or a positive-only transform) would hold
//     the solver at 0 from a bad start; a negative result is reported as "no brush drop".
//   nuisance (3 per run): spin-up [u_on, i_offset, –], coast-down / steady [ω0, i_offset, –],
//                         locked [log(R_k/R), i_offset, u_on]
//   where the switch-on time t_on = lo + (hi − lo)·σ(u_on) stays inside the bracket the data
//   give (σ the logistic function; no bounds, which would stall the solver at an edge).
// Turning runs integrate the mechanical equation J·dω/dt = Kt·i − Tc·sgn(ω) − b·ω (smooth
// sign, model/dynamics.h) with classical RK4 on a fixed grid, the current following the
// terminal voltage quasi-statically (L·di/dt is over within ~5 L/R, far shorter than the
// mechanical time constant; the switch-on transient is left out of the comparison), and
// angle θ alongside so that a period-tach reading is compared with the mean speed over its
// own window. Output between grid nodes is cubic Hermite. The measured terminal voltage
// drives the model (supply sag included); the nominal voltage where none was logged.
// While turning, the brushes see the resistance averaged as conductance (the current is
// e/R(θ)), i.e. κ·R with κ = harmonic/arithmetic mean over rotor positions.
// Locked runs: i = (V − Vb)/R_k quasi-statically, or with L the exact first-order response
// over each sample interval; with heating R_k rises as α·ΔT, C_th·dΔT/dt = i²·R_k.
// Residuals are (measured − model)/σ, optionally through a Huber function (robust stage),
// and 0 for rejected observations so the residual count never changes.
// The same functor evaluates with doubles and with ceres::Jet (automatic differentiation).
#pragma once

#include <ceres/ceres.h>

#include <array>
#include <cmath>
#include <vector>

#include "fit/prep.h"
#include "fit/start.h"
#include "model/dynamics.h"

namespace rb::fit::internal {

enum CoreIndex { kLogR = 0, kLogKe, kLogJ, kLogTc, kLogB, kNumCore };
enum ExtraIndex { kVb = 0, kLogL, kLogInvC, kNumExtra };
inline constexpr int kNumNuisance = 3;

/// Perturbed inputs, for the uncertainty budget (sensitivity to calibration).
struct Perturbation {
  double gain_i = 0, off_i = 0, gain_v = 0, off_v = 0, gain_w = 0;
  double kappa_rel = 0;  ///< relative change of the rotating-resistance factor
};

/// Per-observation weights in residual order.
struct Weights {
  std::vector<double> inv_sigma;  ///< 1/σ; 0 = rejected
  bool robust = false;
  double huber = 3.0;  ///< in σ units
};

enum class Channel : unsigned char { kSpeed, kCurrent, kVoltage };

/// Everything fixed about one run's cost function.
struct RunModel {
  const PreparedRun* run = nullptr;
  model::RunKind kind = model::RunKind::kSpinUp;
  bool turning = true;       ///< spin-up, coast-down, steady (else locked / generator)
  bool spin_up = false;
  bool t_on_free = false;    ///< spin-up or locked: switch-on time is a nuisance
  bool use_extra = false;    ///< the extra block is passed
  bool use_vb = false, use_l = false, use_heating = false;
  double kappa = 1.0;        ///< rotating/arithmetic resistance ratio
  double alpha = 0.00393;    ///< copper coefficient at the run's temperature [1/K]
  double nominal_v = NAN;
  model::Smoothing smoothing;

  // Grid of turning runs. nodes[0] is the start of the modelled stretch (the upper end of
  // the switch-on bracket for a spin-up, whose true start t_on lies before it).
  std::vector<double> nodes;
  std::vector<unsigned char> connected;          ///< per interval
  std::vector<std::array<double, 3>> v_input;    ///< per interval: left, middle, right
  double v_first = NAN;  ///< spin-up: input between t_on and nodes[0]
  /// RK4 substeps per interval. Fixed while the solver runs (a count that followed the
  /// parameters would make the cost jump by the integration error and trap the solver);
  /// planned from a trajectory at given parameters by PlanSubsteps().

  struct Obs {
    Channel channel;
    double t = 0;      ///< time (end of window for speed)
    double ta = NAN;   ///< window start (speed), NaN = instantaneous
    int k = -1, ka = -1;  ///< interval of t and ta (−1 = before the first node)
    double y = 0;      ///< measured value
    double v = NAN;    ///< terminal voltage at t (current observations while driven)
    bool connected = false;
    bool transient = false;
    double w_meas = NAN;  ///< generator: measured speed at t
    int n = 1;            ///< raw readings behind this observation
    int sample = -1;      ///< predictions: index of the sample
  };
  std::vector<Obs> obs;

  std::vector<int> substeps;
  int pre_substeps = 2;  ///< spin-up: between t_on and nodes[0]

  int Interval(double t) const;
  int NumResiduals() const { return static_cast<int>(obs.size()); }
};

/// Optional model terms in force.
struct ModelFlags {
  bool vb = false, l = false, heating = false;
  /// Width of the smooth friction sign [rad/s]: well below the slowest speed the tach
  /// reports, so that the smoothing is invisible in the data.
  double friction_width = 0.5;
};

/// Builds the grid and observation list of one run. `p` (start values) sets the step.
/// connected_part: model the driven stretch before a coast-down cut (R is supported).
/// predict_at: instead of the fitting observations, one observation per channel at every
/// one of these samples (for PredictRun; the model value is then −residual with y = 0).
RunModel BuildRunModel(const PreparedRun& run, const RunStart& start, const model::MotorParams& p,
                       const ModelFlags& flags, bool connected_part, double kappa,
                       const std::vector<model::Sample>* predict_at = nullptr);

/// Plans the RK4 substeps of a turning run from its trajectory at the given parameters
/// (solver coordinates; extra may be null).
void PlanSubsteps(RunModel* m, const double* core, const double* extra, const double* nuis);

/// The residual functor of one run. `extra` may be null (no extra block).
struct RunCost {
  const RunModel* m = nullptr;
  const Weights* w = nullptr;
  const Perturbation* pert = nullptr;
  /// Planning mode (doubles only): choose substeps from the local stiffness and record them.
  std::vector<int>* plan = nullptr;

  template <typename T>
  bool Eval(const T* core, const T* extra, const T* nuis, T* res) const;
};

struct RunCostBasic {
  RunCost c;
  template <typename T>
  bool operator()(const T* core, const T* nuis, T* res) const {
    return c.Eval<T>(core, nullptr, nuis, res);
  }
};
struct RunCostExtra {
  RunCost c;
  template <typename T>
  bool operator()(const T* core, const T* extra, const T* nuis, T* res) const {
    return c.Eval<T>(core, extra, nuis, res);
  }
};

/// Switch-on time from its logistic coordinate (see the header comment).
template <typename T>
T OnTime(const RunModel& m, const T& u) {
  using std::exp;
  // Evaluated so that exp() never overflows: a long solver step in u must not turn the
  // derivative into inf/inf (the step would then end the solve).
  const double span = m.run->on_hi - m.run->on_lo;
  if (model::ScalarPart(u) >= 0) return m.run->on_lo + span / (1.0 + exp(-u));
  const T e = exp(u);
  return m.run->on_lo + span * e / (1.0 + e);
}

/// Random effect of the rotor position: log(R_k/R) ~ N(0, spread²).
struct PositionPrior {
  double inv_spread = 1.0;
  template <typename T>
  bool operator()(const T* nuis, T* res) const {
    res[0] = nuis[0] * inv_spread;
    return true;
  }
};

// ---------------------------------------------------------------- implementation

namespace detail {

template <typename T>
T Robust(const T& r, const Weights& w) {
  using std::sqrt;
  if (!w.robust) return r;
  const double a = std::fabs(model::ScalarPart(r));
  const double c = w.huber;
  if (a <= c) return r;
  // sqrt of the Huber function 2c|r| − c² (equals r² for |r| ≤ c), sign kept.
  const T q = sqrt(T(2.0 * c) * (model::ScalarPart(r) > 0 ? r : -r) - T(c * c));
  return model::ScalarPart(r) > 0 ? q : -q;
}

template <typename T>
struct State {
  T th, w;
};

/// model::QuasiStaticCurrent with a fast path: once |i| is beyond 12 widths of the brush
/// sign, tanh(i/w) = ±1 to 1e-10 and the current is (e ∓ Vb)/R exactly as the implicit
/// solution gives it.
template <typename T>
T Current(const model::ParamsT<T>& p, const T& e, const model::Smoothing& s) {
  const double vb = model::ScalarPart(p.Vb);
  if (vb == 0.0) return e / p.R;
  const double E = model::ScalarPart(e), R = model::ScalarPart(p.R);
  if (E - std::fabs(vb) > 12.0 * s.current_A * R) return (e - p.Vb) / p.R;
  if (E + std::fabs(vb) < -12.0 * s.current_A * R) return (e + p.Vb) / p.R;
  return model::QuasiStaticCurrent(p, e, s);
}

/// model::SpeedDerivative (no load) with the friction sign exact beyond 20 widths.
template <typename T>
T Acceleration(const model::ParamsT<T>& p, const T& i, const T& w, const model::Smoothing& s) {
  const double x = model::ScalarPart(w) / s.speed_rad_s;
  if (x > 20.0) return (p.Ke * i - p.Tc - p.b * w) / p.J;
  if (x < -20.0) return (p.Ke * i + p.Tc - p.b * w) / p.J;
  return model::SpeedDerivative(p, i, w, T(0.0), s);
}

}  // namespace detail

template <typename T>
bool RunCost::Eval(const T* core, const T* extra, const T* nuis, T* res) const {
  using std::exp;
  using std::isfinite;
  const RunModel& M = *m;
  const Perturbation P = pert ? *pert : Perturbation{};
  const T R = exp(core[kLogR]);
  const T Ke = exp(core[kLogKe]);
  const T J = exp(core[kLogJ]);
  const T Tc = exp(core[kLogTc]);
  const T b = exp(core[kLogB]);
  const T Vb = (extra && M.use_vb) ? extra[kVb] : T(0.0);
  const double vscale = 1.0 + P.gain_v;
  auto vin = [&](double v) { return v * vscale + P.off_v; };
  const size_t n_obs = M.obs.size();

  if (M.kind == model::RunKind::kGenerator) {
    for (size_t j = 0; j < n_obs; ++j) {
      const RunModel::Obs& o = M.obs[j];
      const double wi = w->inv_sigma[j];
      if (wi == 0) {
        res[j] = T(0.0);
        continue;
      }
      res[j] = detail::Robust(T((vin(o.y) - 0.0) * wi) - Ke * (o.w_meas * (1.0 + P.gain_w)) * wi, *w);
    }
    return true;
  }

  const T i_off = nuis[1];
  auto meas_i = [&](double y) { return y * (1.0 + P.gain_i) + P.off_i; };

  if (!M.turning) {
    // Locked rotor.
    const T Rk0 = R * exp(nuis[0]);
    const bool with_l = extra && M.use_l;
    const bool with_heat = extra && M.use_heating;
    const T L = with_l ? exp(extra[kLogL]) : T(0.0);
    const T invC = with_heat ? exp(extra[kLogInvC]) : T(0.0);
    const T t_on = M.t_on_free ? OnTime(M, nuis[2]) : T(M.run->on_hi);
    const double t_off = M.run->off;
    T i = T(0.0), dT = T(0.0), t_prev = t_on;
    bool on_started = false;
    model::ParamsT<T> pt{Rk0, T(0.0), T(0.0), T(1.0), T(0.0), T(0.0), Vb};
    for (size_t j = 0; j < n_obs; ++j) {
      const RunModel::Obs& o = M.obs[j];
      const bool on = o.connected;
      T pred;
      if (!on) {
        pred = i_off;
        if (on_started) i = T(0.0);
      } else {
        on_started = true;
        pt.R = with_heat ? Rk0 * (1.0 + M.alpha * dT) : Rk0;
        const double v = std::isfinite(o.v) ? vin(o.v) : M.nominal_v;
        const T iqs = detail::Current(pt, T(v), M.smoothing);
        const T dt = T(o.t) - t_prev;
        if (with_l) {
          const T a = exp(-dt * pt.R / L);
          i = iqs + (i - iqs) * a;
        } else {
          i = iqs;
        }
        if (with_heat) dT = dT + dt * i * i * pt.R * invC;
        t_prev = T(o.t);
        pred = i + i_off;
      }
      (void)t_off;
      const double wi = w->inv_sigma[j];
      res[j] = wi == 0 ? T(0.0) : detail::Robust((T(meas_i(o.y)) - pred) * wi, *w);
    }
    for (size_t j = 0; j < n_obs; ++j) {
      if (!isfinite(res[j])) return false;
    }
    return true;
  }

  // ---- Turning: integrate (θ, ω) over the grid.
  const T Rrot = R * (M.kappa * (1.0 + P.kappa_rel));
  model::ParamsT<T> pt{Rrot, T(0.0), Ke, J, Tc, b, Vb};
  const model::Smoothing& sm = M.smoothing;
  auto rhs = [&](const detail::State<T>& x, double v, bool conn) {
    T i = T(0.0);
    if (conn) i = detail::Current(pt, T(vin(v)) - Ke * x.w, sm);
    return detail::State<T>{x.w, detail::Acceleration(pt, i, x.w, sm)};
  };
  const double jv = model::ScalarPart(J);
  const double stiff_conn = (model::ScalarPart(Ke) * model::ScalarPart(Ke) / model::ScalarPart(Rrot) +
                             model::ScalarPart(b)) / jv;
  const double stiff_open = model::ScalarPart(b) / jv;
  const double fric = model::ScalarPart(Tc) / (jv * sm.speed_rad_s);
  // Substeps from the local stiffness |∂ω̇/∂ω| (planning), with a margin of 2 so that the
  // count stays sufficient while the parameters move during a solve.
  auto stiffness_steps = [&](const detail::State<T>& x, double h, bool conn) {
    const double th = std::tanh(model::ScalarPart(x.w) / sm.speed_rad_s);
    const double lam = (conn ? stiff_conn : stiff_open) + fric * (1 - th * th);
    const double k = std::ceil(2.0 * h * lam / 0.5);
    if (!(k < 400)) return 400;
    return std::max(1, static_cast<int>(k));
  };
  auto substeps = [&](const detail::State<T>& x, double h, bool conn, size_t k) {
    if (plan) {
      const int n = stiffness_steps(x, h, conn);
      if (k < plan->size()) (*plan)[k] = std::max((*plan)[k], n);
      return n;
    }
    return k < M.substeps.size() ? M.substeps[k] : 1;
  };
  // RK4 over [0, h] with the input varying linearly through (vl, vm, vr).
  auto integrate = [&](detail::State<T> x, const T& h, double vl, double vm, double vr, bool conn,
                       int nsub) {
    const T hs = h / double(nsub);
    for (int s = 0; s < nsub; ++s) {
      auto vat = [&](double f) {  // f in [0, 1] over the whole interval
        return f <= 0.5 ? vl + (vm - vl) * 2 * f : vm + (vr - vm) * (2 * f - 1);
      };
      const double f0 = double(s) / nsub, f1 = double(s + 1) / nsub, fm = 0.5 * (f0 + f1);
      const detail::State<T> k1 = rhs(x, vat(f0), conn);
      const detail::State<T> k2 = rhs({x.th + 0.5 * hs * k1.th, x.w + 0.5 * hs * k1.w}, vat(fm), conn);
      const detail::State<T> k3 = rhs({x.th + 0.5 * hs * k2.th, x.w + 0.5 * hs * k2.w}, vat(fm), conn);
      const detail::State<T> k4 = rhs({x.th + hs * k3.th, x.w + hs * k3.w}, vat(f1), conn);
      x.th = x.th + hs / 6.0 * (k1.th + 2.0 * k2.th + 2.0 * k3.th + k4.th);
      x.w = x.w + hs / 6.0 * (k1.w + 2.0 * k2.w + 2.0 * k3.w + k4.w);
    }
    return x;
  };

  const size_t nn = M.nodes.size();
  std::vector<detail::State<T>> x(nn), fl(nn), fr(nn);  // node states; derivatives per interval
  T t0 = T(M.nodes[0]);
  T w_start = T(0.0);
  if (M.spin_up) {
    const T t_on = M.t_on_free ? OnTime(M, nuis[0]) : T(M.run->on_lo);
    t0 = t_on;
    const T hp = T(M.nodes[0]) - t_on;
    detail::State<T> s0{T(0.0), T(0.0)};
    if (model::ScalarPart(hp) > 0) {
      const int ns = M.pre_substeps;
      s0 = integrate(s0, hp, M.v_first, M.v_first, M.v_first, true, ns);
    }
    x[0] = s0;
  } else {
    w_start = nuis[0];
    x[0] = {T(0.0), w_start};
  }
  for (size_t k = 0; k + 1 < nn; ++k) {
    const bool conn = M.connected[k] != 0;
    const auto& vi = M.v_input[k];
    const double h = M.nodes[k + 1] - M.nodes[k];
    fl[k] = rhs(x[k], vi[0], conn);
    const int ns = substeps(x[k], h, conn, k);
    x[k + 1] = integrate(x[k], T(h), vi[0], vi[1], vi[2], conn, ns);
    fr[k] = rhs(x[k + 1], vi[2], conn);
    if (!isfinite(x[k + 1].w)) return false;
  }
  // Hermite interpolation of θ and ω at time t in interval k.
  auto at = [&](double t, int k, T* th, T* w) {
    if (k < 0) {  // before the modelled stretch: at rest (spin-up) or steady at ω0
      if (M.spin_up) {
        *th = T(0.0);
        *w = T(0.0);
      } else {
        *th = w_start * (t - M.nodes[0]);
        *w = w_start;
      }
      return;
    }
    if (nn == 1) {
      *th = x[0].th;
      *w = x[0].w;
      return;
    }
    const size_t kk = static_cast<size_t>(std::min<int>(k, static_cast<int>(nn) - 2));
    const double h = M.nodes[kk + 1] - M.nodes[kk];
    const double s = (t - M.nodes[kk]) / h;
    const double s2 = s * s, s3 = s2 * s;
    const double h00 = 2 * s3 - 3 * s2 + 1, h10 = s3 - 2 * s2 + s, h01 = -2 * s3 + 3 * s2,
                 h11 = s3 - s2;
    *w = h00 * x[kk].w + (h10 * h) * fl[kk].w + h01 * x[kk + 1].w + (h11 * h) * fr[kk].w;
    *th = h00 * x[kk].th + (h10 * h) * x[kk].w + h01 * x[kk + 1].th + (h11 * h) * x[kk + 1].w;
  };
  (void)t0;
  for (size_t j = 0; j < n_obs; ++j) {
    const RunModel::Obs& o = M.obs[j];
    const double wi = w->inv_sigma[j];
    if (wi == 0) {
      res[j] = T(0.0);
      continue;
    }
    T r = T(0.0);
    switch (o.channel) {
      case Channel::kSpeed: {
        T thb, wb;
        at(o.t, o.k, &thb, &wb);
        T pred = wb;
        if (!std::isnan(o.ta)) {
          T tha, wa;
          at(o.ta, o.ka, &tha, &wa);
          pred = (thb - tha) / (o.t - o.ta);
        }
        r = (T(o.y * (1.0 + P.gain_w)) - pred) * wi;
        break;
      }
      case Channel::kCurrent: {
        T pred = i_off;
        if (o.connected) {
          T th, wv;
          at(o.t, o.k, &th, &wv);
          const double v = std::isfinite(o.v) ? vin(o.v) : M.nominal_v;
          pred = pred + detail::Current(pt, T(v) - Ke * wv, sm);
        }
        r = (T(meas_i(o.y)) - pred) * wi;
        break;
      }
      case Channel::kVoltage: {
        T th, wv;
        at(o.t, o.k, &th, &wv);
        r = (T(vin(o.y)) - Ke * wv) * wi;
        break;
      }
    }
    res[j] = detail::Robust(r, *w);
    if (!isfinite(res[j])) return false;
  }
  return true;
}

}  // namespace rb::fit::internal
