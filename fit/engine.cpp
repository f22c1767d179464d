// The motor fit: robust stage → outliers and noise → final least squares → covariance.
#include "fit/engine.h"

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <fmt/format.h>
#include <thread>
#include <unordered_map>

#include "base/version.h"
#include "fit/least_squares.h"
#include "model/copper.h"

namespace rb::fit::internal {
namespace {

using model::RunKind;

constexpr double kRejectSigmas = 5.0;  // |r| beyond this (robust σ) is an outlier

int Ch(Channel c) { return static_cast<int>(c); }

/// Noise groups: speed, current while driven, voltage, current with the circuit open
/// (instrument noise only, no commutator ripple).
constexpr int kGroups = 4;
int Group(const RunModel::Obs& o) {
  return o.channel == Channel::kCurrent && !o.connected ? 3 : Ch(o.channel);
}

struct Slot {
  PreparedRun* prep = nullptr;
  const RunData* data = nullptr;
  RunStart start;
  RunModel model;
  Weights weights;
  std::array<double, kNumNuisance> nuis{};
  std::vector<int> nuis_fixed;
  std::vector<double> nuis_lo, nuis_hi;
  ceres::CostFunction* cost = nullptr;  // owned by the problem
  ceres::ResidualBlockId id = nullptr;
  std::array<double, kGroups> sigma0{};    // first-guess σ per noise group
  std::array<double, kGroups> sigma{};     // residual RMS per noise group
  std::array<double, kGroups> tau{1, 1, 1, 1};  // integrated autocorrelation time per group
  std::array<std::size_t, kGroups> rejected{};  // raw readings rejected per group
};

double Floor(double s, double scale) {
  const double f = std::max(1e-9, 1e-4 * scale);
  return std::isfinite(s) && s > f ? s : f;
}

/// Integrated autocorrelation time 1 + 2·Σρ_k over the initial positive sequence.
double IntegratedTau(const std::vector<double>& e) {
  const size_t n = e.size();
  if (n < 20) return 1.0;
  double c0 = 0;
  for (double x : e) c0 += x * x;
  if (!(c0 > 0)) return 1.0;
  double tau = 1.0;
  const size_t kmax = std::min<size_t>(n / 4, 300);
  for (size_t k = 1; k <= kmax; ++k) {
    double c = 0;
    for (size_t i = 0; i + k < n; ++i) c += e[i] * e[i + k];
    const double rho = c / c0;
    if (rho <= 0.05) break;
    tau += 2 * rho;
  }
  return std::clamp(tau, 1.0, 100.0);
}

ceres::CostFunction* MakeCost(const Slot& s, const Perturbation* pert) {
  RunCost c{&s.model, &s.weights, pert};
  const int n = s.model.NumResiduals();
  if (s.model.use_extra) {
    return new ceres::AutoDiffCostFunction<RunCostExtra, ceres::DYNAMIC, kNumCore, kNumExtra,
                                           kNumNuisance>(new RunCostExtra{c}, n);
  }
  return new ceres::AutoDiffCostFunction<RunCostBasic, ceres::DYNAMIC, kNumCore, kNumNuisance>(
      new RunCostBasic{c}, n);
}

}  // namespace

Result<EngineResult> RunEngine(const std::vector<RunData>& runs, const FitOptions& options) {
  const auto t_begin = std::chrono::steady_clock::now();
  EngineResult E;
  FitSummary& S = E.summary;
  S.software_version = kVersion;
  if (runs.empty()) {
    return Status::InvalidArgument("no runs to fit; import or record runs of the motor first");
  }

  // ---- Prepare; set aside what the model cannot use.
  std::vector<std::pair<PreparedRun*, const RunData*>> usable;
  for (const RunData& r : runs) {
    Result<PreparedRun> p = PrepareRun(r);
    if (!p.ok()) return p.status();
    const std::string tag = fmt::format("run {} ({})", r.id, model::RunKindName(r.kind));
    if (r.kind == RunKind::kFree || r.kind == RunKind::kLoaded) {
      E.skipped.push_back(tag + ": not used; the model has no shaft load or external drive");
      continue;
    }
    if (r.kind == RunKind::kGenerator && !(p->has_voltage && p->has_speed)) {
      E.skipped.push_back(tag + ": not used; a generator run needs voltage and speed");
      continue;
    }
    if (p->kind != RunKind::kGenerator && p->kind != RunKind::kLocked && !p->has_speed) {
      E.skipped.push_back(tag + ": not used; no speed readings");
      continue;
    }
    if (p->kind == RunKind::kLocked && !p->has_current) {
      E.skipped.push_back(tag + ": not used; a locked-rotor run needs the current");
      continue;
    }
    E.prepared.push_back(std::make_unique<PreparedRun>(std::move(*p)));
    usable.emplace_back(E.prepared.back().get(), &r);
  }
  if (usable.empty()) {
    return Status::FailedPrecondition("none of the runs can be fitted: " +
                                      (E.skipped.empty() ? std::string("no data") : E.skipped.front()));
  }
  std::vector<PreparedRun> prep_copy;
  for (auto& [p, d] : usable) prep_copy.push_back(*p);

  // ---- Start values, what the data supports, the model.
  const bool want_brush = !options.model || options.model->brush_drop;
  E.start = EstimateStart(prep_copy, want_brush);
  StartValues& sv = E.start;
  if (options.model) {
    E.spec = *options.model;
    E.model_chosen_automatically = false;
  } else {
    E.spec.brush_drop = sv.voltage_levels >= 2 && sv.r_supported;
    E.spec.inductance = sv.l_resolved;
    E.spec.heating = sv.heating_seen;
  }
  if (!E.spec.brush_drop) sv.p.Vb = 0;
  // Starting points for the robust stage: a caller's start (if any), then the closed forms.
  // The one that ends with the lower robust cost wins, so a bad start costs time only.
  std::vector<model::MotorParams> starts;
  if (options.start) {
    model::MotorParams u = sv.p;
    const model::MotorParams& o = *options.start;
    if (o.R > 0) u.R = o.R;
    if (o.Ke > 0) u.Ke = o.Ke;
    if (o.J > 0) u.J = o.J;
    if (o.Tc > 0) u.Tc = o.Tc;
    if (o.b > 0) u.b = o.b;
    if (o.Vb > 0 && E.spec.brush_drop) u.Vb = o.Vb;
    if (o.L > 0) u.L = o.L;
    starts.push_back(u);
  }
  starts.push_back(sv.p);
  const bool connected_part = sv.r_supported;

  // ---- Dense ADC samples: short bins (never across a switch or a transient).
  const double rr = sv.p.R * sv.kappa;
  const double tau_m = sv.p.J * rr / (sv.p.Ke * sv.p.Ke + sv.p.b * rr);
  const double bin = options.average_dense_samples ? std::clamp(tau_m / 20.0, 0.0, 5e-3) : 0.0;
  std::vector<Slot> slots;
  for (size_t k = 0; k < usable.size(); ++k) {
    PreparedRun* p = usable[k].first;
    const bool dense = std::isfinite(p->adc_dt) && bin >= 2 * p->adc_dt;
    BinAdc(*usable[k].second, PrepOptions{dense ? bin : 0.0, 0.0}, p);
    if (p->kind == RunKind::kSteady && !connected_part) {
      E.skipped.push_back(fmt::format(
          "run {} (steady): not used; without a run that varies the current (a locked rotor or "
          "a spin-up) a steady state cannot separate R from Ke",
          p->id));
      continue;
    }
    Slot s;
    s.prep = p;
    s.data = usable[k].second;
    s.start = sv.runs[k];
    slots.push_back(std::move(s));
  }
  ModelFlags flags{E.spec.brush_drop, E.spec.inductance, E.spec.heating};
  {
    // Friction sign width: well below the slowest non-zero tach reading.
    double wmin = INFINITY;
    for (const Slot& s : slots) {
      for (const SpeedObs& o : s.prep->speed) wmin = std::min(wmin, std::fabs(o.y));
    }
    flags.friction_width = std::isfinite(wmin) ? std::clamp(wmin / 8.0, 0.5, 5.0) : 0.5;
  }
  for (Slot& s : slots) {
    s.model = BuildRunModel(*s.prep, s.start, sv.p, flags, connected_part, sv.kappa);
  }
  slots.erase(std::remove_if(slots.begin(), slots.end(),
                             [&](const Slot& s) {
                               if (!s.model.obs.empty()) return false;
                               E.skipped.push_back(fmt::format(
                                   "run {} ({}): not used; nothing in it to compare with the model",
                                   s.prep->id, model::RunKindName(s.prep->kind)));
                               return true;
                             }),
              slots.end());
  if (slots.empty()) {
    std::string why;
    for (const std::string& w : E.skipped) why += (why.empty() ? "" : "; ") + w;
    return Status::FailedPrecondition("these runs cannot determine any motor constant: " + why);
  }

  // ---- Parameters.
  std::array<double, kNumCore> core = {std::log(sv.p.R), std::log(sv.p.Ke), std::log(sv.p.J),
                                       std::log(sv.p.Tc), std::log(sv.p.b)};
  const double inv_c0 = sv.inv_heat_capacity > 0 ? sv.inv_heat_capacity : 1e-3;
  std::array<double, kNumExtra> extra = {sv.p.Vb, std::log(std::max(sv.p.L, 1e-9)),
                                         std::log(inv_c0)};
  const bool use_extra = flags.vb || flags.l || flags.heating;
  for (Slot& s : slots) {
    const PreparedRun& p = *s.prep;
    s.nuis = {0, s.start.i_offset, 0};
    s.nuis_lo.assign(kNumNuisance, -INFINITY);
    s.nuis_hi.assign(kNumNuisance, INFINITY);
    if (!s.start.offset_free) s.nuis_fixed.push_back(1);
    switch (p.kind) {
      case RunKind::kSpinUp:
        s.nuis[0] = 0.0;  // logistic coordinate: the middle of the bracket
        if (!s.model.t_on_free) s.nuis_fixed.push_back(0);
        s.nuis_fixed.push_back(2);
        break;
      case RunKind::kCoastDown:
      case RunKind::kSteady:
        s.nuis[0] = std::isfinite(s.start.w0) ? s.start.w0 : 0.0;
        s.nuis_fixed.push_back(2);
        break;
      case RunKind::kLocked:
        s.nuis[0] = std::isfinite(s.start.r_locked) && std::isfinite(sv.p.R)
                        ? std::log(s.start.r_locked / sv.p.R)
                        : 0.0;
        s.nuis[2] = 0.0;
        if (!s.model.t_on_free) s.nuis_fixed.push_back(2);
        break;
      default:
        s.nuis_fixed = {0, 1, 2};
        break;
    }
    std::sort(s.nuis_fixed.begin(), s.nuis_fixed.end());
    s.nuis_fixed.erase(std::unique(s.nuis_fixed.begin(), s.nuis_fixed.end()), s.nuis_fixed.end());
    // First-guess noise per channel.
    double wmax = 0, imax = 0, vmax = 0;
    for (const SpeedObs& o : p.speed) wmax = std::max(wmax, std::fabs(o.y));
    for (const AdcObs& o : p.adc) {
      if (std::isfinite(o.i)) imax = std::max(imax, std::fabs(o.i));
      if (std::isfinite(o.v)) vmax = std::max(vmax, std::fabs(o.v));
    }
    // First-guess σ per group from the observations themselves (second differences,
    // 10–90 % range scale: ripple and quantisation count, a few outliers do not).
    std::array<std::vector<double>, kGroups> series;
    for (const RunModel::Obs& o : s.model.obs) series[static_cast<size_t>(Group(o))].push_back(o.y);
    std::array<double, kGroups> guess{};
    for (int g = 0; g < kGroups; ++g) {
      const std::vector<double>& v = series[static_cast<size_t>(g)];
      std::vector<double> d;
      for (size_t k = 2; k < v.size(); ++k) d.push_back(v[k] - 2 * v[k - 1] + v[k - 2]);
      guess[static_cast<size_t>(g)] = d.size() >= 5 ? RangeScale(d) / std::sqrt(6.0) : NAN;
    }
    s.sigma0 = {Floor(guess[0], wmax), Floor(guess[1], imax), Floor(guess[2], vmax),
                Floor(guess[3], imax)};
    s.weights.inv_sigma.resize(s.model.obs.size());
    for (size_t j = 0; j < s.model.obs.size(); ++j) {
      s.weights.inv_sigma[j] = 1.0 / s.sigma0[static_cast<size_t>(Group(s.model.obs[j]))];
    }
  }

  auto plan_all = [&]() {
    for (Slot& s : slots) PlanSubsteps(&s.model, core.data(), use_extra ? extra.data() : nullptr, s.nuis.data());
  };
  Perturbation pert;
  ceres::Problem problem;
  std::vector<lsq::Block> blocks;
  blocks.push_back({core.data(), kNumCore, {}, {}, {}});
  if (use_extra) {
    lsq::Block eb{extra.data(), kNumExtra, {}, {}, {}};
    if (!flags.vb) eb.fixed.push_back(kVb);
    if (!flags.l) eb.fixed.push_back(kLogL);
    if (!flags.heating) eb.fixed.push_back(kLogInvC);
    blocks.push_back(eb);
  }
  std::unordered_map<ceres::ResidualBlockId, size_t> slot_of;
  for (size_t k = 0; k < slots.size(); ++k) {
    Slot& s = slots[k];
    s.cost = MakeCost(s, &pert);
    s.id = use_extra ? problem.AddResidualBlock(s.cost, nullptr, core.data(), extra.data(), s.nuis.data())
                     : problem.AddResidualBlock(s.cost, nullptr, core.data(), s.nuis.data());
    slot_of[s.id] = k;
    if (s.prep->kind == RunKind::kLocked) {
      problem.AddResidualBlock(new ceres::AutoDiffCostFunction<PositionPrior, 1, kNumNuisance>(
                                   new PositionPrior{1.0 / sv.position_spread}),
                               nullptr, s.nuis.data());
    }
    blocks.push_back({s.nuis.data(), kNumNuisance, s.nuis_fixed, s.nuis_lo, s.nuis_hi});
  }
  lsq::ConfigureBlocks(&problem, blocks);
  const int threads = options.threads > 0
                          ? options.threads
                          : static_cast<int>(std::clamp(std::thread::hardware_concurrency(), 1u, 2u));

  // ---- Stage 1: robust (Huber) fit from the closed-form start.
  for (Slot& s : slots) s.weights.robust = true;
  lsq::Options o1;
  o1.max_iterations = 100;
  o1.function_tolerance = 1e-9;
  o1.parameter_tolerance = 1e-14;
  o1.gradient_tolerance = 1e-12;
  o1.covariance = false;
  o1.sparse = true;
  o1.num_threads = threads;
  const std::vector<std::array<double, kNumNuisance>> nuis0 = [&] {
    std::vector<std::array<double, kNumNuisance>> v;
    for (const Slot& s : slots) v.push_back(s.nuis);
    return v;
  }();
  int iterations = 0;
  double best = INFINITY;
  std::array<double, kNumCore> best_core = core;
  std::array<double, kNumExtra> best_extra = extra;
  std::vector<std::array<double, kNumNuisance>> best_nuis = nuis0;
  for (const model::MotorParams& st : starts) {
    core = {std::log(st.R), std::log(st.Ke), std::log(st.J), std::log(st.Tc), std::log(st.b)};
    extra[kVb] = st.Vb;
    extra[kLogL] = std::log(std::max(st.L, 1e-9));
    for (size_t k = 0; k < slots.size(); ++k) slots[k].nuis = nuis0[k];
    plan_all();
    lsq::Result r1 = lsq::Solve(&problem, blocks, o1);
    iterations += r1.iterations;
    if (r1.rss < best) {
      best = r1.rss;
      best_core = core;
      best_extra = extra;
      for (size_t k = 0; k < slots.size(); ++k) best_nuis[k] = slots[k].nuis;
    }
  }
  if (!std::isfinite(best)) {
    return Status::FailedPrecondition(
        "the fit failed: the model could not be evaluated from any start; the runs may not "
        "belong together or their kinds may be wrong");
  }
  core = best_core;
  extra = best_extra;
  for (size_t k = 0; k < slots.size(); ++k) slots[k].nuis = best_nuis[k];

  plan_all();  // substeps for the parameters found

  // ---- Stage 2: noise per run and channel, outliers, residual correlation.
  std::vector<double> res;
  for (Slot& s : slots) {
    s.weights.robust = false;
    const int n = s.model.NumResiduals();
    res.assign(static_cast<size_t>(n), 0.0);
    std::vector<double*> params = {core.data()};
    if (use_extra) params.push_back(extra.data());
    params.push_back(s.nuis.data());
    if (!s.cost->Evaluate(params.data(), res.data(), nullptr)) {
      return Status::FailedPrecondition(fmt::format(
          "run {}: the model could not be evaluated at the robust estimate (it diverged); the "
          "runs may not belong together",
          s.prep->id));
    }
    for (int c = 0; c < kGroups; ++c) {
      std::vector<double> r;
      for (size_t j = 0; j < s.model.obs.size(); ++j) {
        if (Group(s.model.obs[j]) == c) r.push_back(res[j]);
      }
      if (r.empty()) continue;
      const double scale = std::max(RangeScale(r), 1e-3);
      std::vector<double> inl;
      double ss = 0;
      for (size_t j = 0; j < s.model.obs.size(); ++j) {
        if (Group(s.model.obs[j]) != c) continue;
        if (std::fabs(res[j]) > kRejectSigmas * scale) {
          s.weights.inv_sigma[j] = 0;
          s.rejected[static_cast<size_t>(c)] += static_cast<std::size_t>(s.model.obs[j].n);
        } else {
          inl.push_back(res[j]);
          ss += res[j] * res[j];
        }
      }
      // The channel's σ is the RMS of its inliers (ripple counts as noise).
      const double rms = inl.empty() ? scale : std::sqrt(ss / static_cast<double>(inl.size()));
      s.sigma[static_cast<size_t>(c)] = s.sigma0[static_cast<size_t>(c)] * std::max(rms, 1e-3);
      s.tau[static_cast<size_t>(c)] = IntegratedTau(inl);
      const double eff = s.sigma[static_cast<size_t>(c)] * std::sqrt(s.tau[static_cast<size_t>(c)]);
      for (size_t j = 0; j < s.model.obs.size(); ++j) {
        if (Group(s.model.obs[j]) == c && s.weights.inv_sigma[j] != 0) {
          s.weights.inv_sigma[j] = 1.0 / eff;
        }
      }
    }
  }

  // ---- Stage 3: least squares on the inliers, covariance, sensitivities.
  struct Source {
    std::string name;
    std::function<Perturbation(const Slot&)> make;
  };
  std::vector<Source> sources;
  auto cal_any = [&](auto get) {
    for (const Slot& s : slots) {
      if (s.prep->calibration_declared && get(s.prep->calibration) > 0) return true;
    }
    return false;
  };
  for (const Slot& s : slots) E.any_calibration = E.any_calibration || s.prep->calibration_declared;
  if (cal_any([](const model::Calibration& c) { return c.current.gain_u; })) {
    sources.push_back({"current sensor gain", [](const Slot& s) {
                         Perturbation q;
                         q.gain_i = s.prep->calibration.current.gain_u;
                         return q;
                       }});
  }
  if (cal_any([](const model::Calibration& c) { return c.current.offset_u; })) {
    sources.push_back({"current sensor offset", [](const Slot& s) {
                         Perturbation q;
                         q.off_i = s.prep->calibration.current.offset_u;
                         return q;
                       }});
  }
  if (cal_any([](const model::Calibration& c) { return c.voltage.gain_u; })) {
    sources.push_back({"voltage sensor gain", [](const Slot& s) {
                         Perturbation q;
                         q.gain_v = s.prep->calibration.voltage.gain_u;
                         return q;
                       }});
  }
  if (cal_any([](const model::Calibration& c) { return c.voltage.offset_u; })) {
    sources.push_back({"voltage sensor offset", [](const Slot& s) {
                         Perturbation q;
                         q.off_v = s.prep->calibration.voltage.offset_u;
                         return q;
                       }});
  }
  if (cal_any([](const model::Calibration& c) { return c.speed.gain_u; })) {
    sources.push_back({"tach timer / speed scale", [](const Slot& s) {
                         Perturbation q;
                         q.gain_w = s.prep->calibration.speed.gain_u;
                         return q;
                       }});
  }
  if (sv.kappa_u > 0) {
    const double rel = sv.kappa_u / sv.kappa;
    sources.push_back({"commutator: rotating vs locked resistance", [rel](const Slot&) {
                         Perturbation q;
                         q.kappa_rel = rel;
                         return q;
                       }});
  }
  lsq::Options o3;
  o3.max_iterations = 50;
  o3.function_tolerance = 1e-10;
  o3.parameter_tolerance = 1e-14;
  o3.gradient_tolerance = 1e-12;
  o3.polish_iterations = 2;
  o3.num_threads = threads;
  o3.rank_tolerance = 1e-9;
  o3.sparse = true;
  o3.num_perturbations = static_cast<int>(sources.size());
  std::vector<double> base, moved;
  o3.perturbations = [&](ceres::ResidualBlockId id, int rows, Eigen::MatrixXd* dr) {
    auto it = slot_of.find(id);
    if (it == slot_of.end()) return;
    Slot& s = slots[it->second];
    std::vector<double*> params = {core.data()};
    if (use_extra) params.push_back(extra.data());
    params.push_back(s.nuis.data());
    base.assign(static_cast<size_t>(rows), 0.0);
    moved.assign(static_cast<size_t>(rows), 0.0);
    pert = Perturbation{};
    if (!s.cost->Evaluate(params.data(), base.data(), nullptr)) return;
    for (size_t q = 0; q < sources.size(); ++q) {
      pert = sources[q].make(s);
      const bool ok = s.cost->Evaluate(params.data(), moved.data(), nullptr);
      pert = Perturbation{};
      if (!ok) continue;
      for (int j = 0; j < rows; ++j) {
        (*dr)(j, static_cast<int>(q)) = moved[static_cast<size_t>(j)] - base[static_cast<size_t>(j)];
      }
    }
  };
  lsq::Result r3 = lsq::Solve(&problem, blocks, o3);
  iterations += r3.iterations;
  E.converged = r3.converged || r3.polish_steps > 0;
  S.termination = r3.termination;
  S.iterations = iterations;
  if (!std::isfinite(r3.rss)) {
    return Status::FailedPrecondition("the fit failed: " + r3.termination);
  }

  // Residual variance in plain σ units (before the correlation allowance).
  double chi2 = 0;
  long long n_inl = 0;
  {
    for (Slot& s : slots) {
      const int n = s.model.NumResiduals();
      res.assign(static_cast<size_t>(n), 0.0);
      std::vector<double*> params = {core.data()};
      if (use_extra) params.push_back(extra.data());
      params.push_back(s.nuis.data());
      if (!s.cost->Evaluate(params.data(), res.data(), nullptr)) continue;
      for (size_t j = 0; j < s.model.obs.size(); ++j) {
        if (s.weights.inv_sigma[j] == 0) continue;
        const double t = s.tau[static_cast<size_t>(Group(s.model.obs[j]))];
        chi2 += res[j] * res[j] * t;
        ++n_inl;
      }
    }
  }
  const long long dof = n_inl - r3.num_free;
  E.s2 = dof > 0 ? chi2 / static_cast<double>(dof) : 1.0;

  // ---- Map the free parameters to the motor's constants (SI).
  const int p = r3.num_free;
  Eigen::MatrixXd cov = E.s2 * r3.cov_unscaled;
  // Which free index (if any) is each motor parameter; scale log → SI.
  std::array<int, model::kNumParams> fi;
  fi.fill(-1);
  std::array<double, model::kNumParams> value{}, dlog{};
  const double R = std::exp(core[kLogR]), Ke = std::exp(core[kLogKe]), J = std::exp(core[kLogJ]),
               Tc = std::exp(core[kLogTc]), b = std::exp(core[kLogB]);
  value[model::kR] = R;
  value[model::kKe] = Ke;
  value[model::kJ] = J;
  value[model::kTc] = Tc;
  value[model::kB] = b;
  value[model::kVb] = flags.vb ? extra[kVb] : 0.0;
  value[model::kL] = flags.l ? std::exp(extra[kLogL]) : 0.0;
  const int core_map[kNumCore] = {model::kR, model::kKe, model::kJ, model::kTc, model::kB};
  for (int c = 0; c < kNumCore; ++c) {
    fi[static_cast<size_t>(core_map[c])] = r3.FreeIndex(0, c);
    dlog[static_cast<size_t>(core_map[c])] = value[static_cast<size_t>(core_map[c])];
  }
  if (use_extra) {
    if (flags.vb) {
      fi[model::kVb] = r3.FreeIndex(1, kVb);
      dlog[model::kVb] = 1.0;
    }
    if (flags.l) {
      fi[model::kL] = r3.FreeIndex(1, kLogL);
      dlog[model::kL] = value[model::kL];
    }
  }
  // Position random effects: the nuisance log(R_k/R) of every locked run.
  std::vector<int> pos_idx;
  for (size_t k = 0; k < slots.size(); ++k) {
    if (slots[k].prep->kind != RunKind::kLocked) continue;
    const int j = r3.FreeIndex(static_cast<int>(blocks.size() - slots.size() + k), 0);
    if (j >= 0) pos_idx.push_back(j);
  }
  // Conditional covariance (positions known) by the Schur complement.
  Eigen::MatrixXd cond = cov;
  if (!pos_idx.empty()) {
    const int q = static_cast<int>(pos_idx.size());
    Eigen::MatrixXd Cab(p, q), Cbb(q, q);
    for (int a = 0; a < p; ++a) {
      for (int j = 0; j < q; ++j) Cab(a, j) = cov(a, pos_idx[static_cast<size_t>(j)]);
    }
    for (int i = 0; i < q; ++i) {
      for (int j = 0; j < q; ++j) Cbb(i, j) = cov(pos_idx[static_cast<size_t>(i)], pos_idx[static_cast<size_t>(j)]);
    }
    cond = cov - Cab * Cbb.completeOrthogonalDecomposition().pseudoInverse() * Cab.transpose();
  }

  model::ParamCovariance Cstat = model::ParamCovariance::Zero();
  model::ParamCovariance Cnoise = model::ParamCovariance::Zero();
  for (int i = 0; i < model::kNumParams; ++i) {
    for (int k = 0; k < model::kNumParams; ++k) {
      const int a = fi[static_cast<size_t>(i)], c = fi[static_cast<size_t>(k)];
      if (a < 0 || c < 0) continue;
      const double f = dlog[static_cast<size_t>(i)] * dlog[static_cast<size_t>(k)];
      Cstat(i, k) = f * cov(a, c);
      Cnoise(i, k) = f * cond(a, c);
    }
  }
  // Calibration sources: Δθ per source → SI shift vector.
  model::ParamCovariance Ccal = model::ParamCovariance::Zero();
  for (size_t q = 0; q < sources.size(); ++q) {
    BudgetSource bs{sources[q].name};
    for (int i = 0; i < model::kNumParams; ++i) {
      const int a = fi[static_cast<size_t>(i)];
      if (a >= 0) bs.delta(i) = dlog[static_cast<size_t>(i)] * r3.sensitivities(a, static_cast<int>(q));
    }
    Ccal += bs.delta * bs.delta.transpose();
    E.sources.push_back(bs);
  }

  // ---- Parameters, identifiability.
  for (int i = 0; i < model::kNumParams; ++i) {
    ParamResult& pr = S.params[static_cast<size_t>(i)];
    const int a = fi[static_cast<size_t>(i)];
    pr.value = value[static_cast<size_t>(i)];
    if (a < 0) {
      // Held by the model choice (L = 0, Vb = 0) or at a bound (Vb = 0).
      pr.fitted = false;
      continue;
    }
    pr.fitted = true;
    pr.stderr_stat = std::sqrt(std::max(0.0, Cstat(i, i)));
    pr.u_combined = std::sqrt(std::max(0.0, Cstat(i, i) + Ccal(i, i)));
    const double rel = pr.value != 0 ? pr.stderr_stat / std::fabs(pr.value) : INFINITY;
    E.rel_se[static_cast<size_t>(i)] = rel;
    const bool numerically = !r3.identifiable[static_cast<size_t>(a)];
    // A relative standard error above 100 % is no estimate either.
    const bool useless = i != model::kVb && !(rel <= 1.0);
    if (numerically || useless) E.unidentified[static_cast<size_t>(i)] = true;
  }
  // By rule: R and Ke need the data described in start.h.
  if (!sv.r_supported) E.unidentified[model::kR] = true;
  if (!sv.ke_supported && !sv.r_supported) E.unidentified[model::kKe] = true;
  for (int i = 0; i < model::kNumParams; ++i) {
    if (!E.unidentified[static_cast<size_t>(i)]) continue;
    ParamResult& pr = S.params[static_cast<size_t>(i)];
    pr = ParamResult{};
    pr.value = NAN;
    pr.identified = false;
    Cstat.row(i).setZero();
    Cstat.col(i).setZero();
    Cnoise.row(i).setZero();
    Cnoise.col(i).setZero();
    Ccal.row(i).setZero();
    Ccal.col(i).setZero();
    for (BudgetSource& bs : E.sources) bs.delta(i) = 0;
  }
  S.covariance_stat = Cstat;
  S.covariance = Cstat + Ccal;

  // ---- Budget lines.
  for (int i = 0; i < model::kNumParams; ++i) {
    const ParamResult& pr = S.params[static_cast<size_t>(i)];
    if (!pr.fitted) continue;
    S.budget.push_back({i, "fit (measurement noise)", std::sqrt(std::max(0.0, Cnoise(i, i)))});
    if (!pos_idx.empty()) {
      const double pos = Cstat(i, i) - Cnoise(i, i);
      if (pos > 1e-6 * Cstat(i, i)) {
        S.budget.push_back({i, "locked-rotor position spread", std::sqrt(pos)});
      }
    }
    for (const BudgetSource& bs : E.sources) {
      if (bs.delta(i) != 0) S.budget.push_back({i, bs.name, std::fabs(bs.delta(i))});
    }
  }

  // ---- Heating term.
  if (flags.heating) {
    ParamResult h;
    const int a = use_extra ? r3.FreeIndex(1, kLogInvC) : -1;
    const double inv_c = std::exp(extra[kLogInvC]);
    h.value = 1.0 / inv_c;
    if (a >= 0 && r3.identifiable[static_cast<size_t>(a)]) {
      h.fitted = true;
      // C = 1/invC: relative SE equals that of invC.
      h.stderr_stat = h.value * std::sqrt(std::max(0.0, cov(a, a)));
      h.u_combined = h.stderr_stat;
    } else {
      h.value = NAN;
      h.identified = false;
    }
    S.extra.emplace_back("winding_heat_capacity_J_per_K", h);
  }
  if (sv.kappa != 1.0) {
    // While turning the brushes see κ·R (conductance averaged over rotor position).
    ParamResult k;
    k.fitted = false;
    k.value = sv.kappa;
    k.stderr_stat = k.u_combined = sv.kappa_u;
    S.extra.emplace_back("rotating_resistance_factor", k);
  }

  // ---- Temperature and R20 (IEC 60028: α20 = 0.00393/K).
  double temp = options.winding_temperature_C;
  if (std::isnan(temp)) {
    double sum = 0;
    int n = 0;
    for (const Slot& s : slots) {
      if (std::isfinite(s.prep->ambient_C)) sum += s.prep->ambient_C, ++n;
    }
    if (n > 0) temp = sum / n;
  }
  const ParamResult& pr_r = S.params[model::kR];
  if (std::isfinite(temp) && pr_r.identified && pr_r.fitted) {
    S.temperature_C = temp;
    const double f = 1.0 + model::kCopperAlpha20 * (temp - 20.0);
    S.R20 = pr_r.value / f;
    const double dT = *S.R20 * model::kCopperAlpha20 / f * options.temperature_u_K;
    S.R20_u = std::sqrt(std::pow(pr_r.u_combined / f, 2) + dT * dT);
  }

  // ---- Per-run results.
  const char* names[3] = {"speed", "current", "voltage"};
  for (Slot& s : slots) {
    RunFit rf;
    rf.run_id = s.prep->id;
    rf.kind = s.prep->kind;
    rf.nominal_voltage = std::isfinite(s.prep->nominal_voltage) ? s.prep->nominal_voltage
                         : std::isfinite(s.start.v_level)       ? s.start.v_level
                                                                : NAN;
    switch (s.prep->kind) {
      case RunKind::kSpinUp:
        rf.nuisance.emplace_back("t_on_s", s.model.t_on_free ? OnTime(s.model, s.nuis[0]) : s.prep->on_lo);
        break;
      case RunKind::kCoastDown:
      case RunKind::kSteady:
        rf.nuisance.emplace_back("w0_rad_s", s.nuis[0]);
        break;
      case RunKind::kLocked:
        rf.nuisance.emplace_back("R_position_ohm", R * std::exp(s.nuis[0]));
        if (s.model.t_on_free) rf.nuisance.emplace_back("t_on_s", OnTime(s.model, s.nuis[2]));
        break;
      default:
        break;
    }
    if (s.start.offset_free && s.prep->kind != RunKind::kGenerator) {
      rf.nuisance.emplace_back("i_offset_A", s.nuis[1]);
    }
    const int n = s.model.NumResiduals();
    res.assign(static_cast<size_t>(n), 0.0);
    std::vector<double*> params = {core.data()};
    if (use_extra) params.push_back(extra.data());
    params.push_back(s.nuis.data());
    const bool ok = s.cost->Evaluate(params.data(), res.data(), nullptr);
    for (int c = 0; c < 3; ++c) {
      ChannelFit cf;
      cf.channel = names[c];
      double ss = 0;
      std::size_t m = 0;
      bool any = false;
      for (size_t j = 0; j < s.model.obs.size(); ++j) {
        const RunModel::Obs& o = s.model.obs[j];
        if (Ch(o.channel) != c) continue;
        any = true;
        cf.n += static_cast<std::size_t>(o.n);
        const double wi = s.weights.inv_sigma[j];
        if (wi == 0 || !ok) continue;
        const double r = res[j] / wi;
        ss += r * r;
        ++m;
      }
      if (!any) continue;
      cf.rms = m ? std::sqrt(ss / static_cast<double>(m)) : NAN;
      cf.sigma = s.sigma[static_cast<size_t>(c)] > 0 ? s.sigma[static_cast<size_t>(c)]
                 : c == 1                           ? s.sigma[3]
                                                    : NAN;
      cf.outliers = s.rejected[static_cast<size_t>(c)] + (c == 1 ? s.rejected[3] : 0);
      rf.channels.push_back(cf);
    }
    S.runs.push_back(std::move(rf));
    E.runs_used.push_back(s.prep);
  }

  S.model = E.spec;
  S.final_cost = 0.5 * r3.rss;
  S.solve_seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - t_begin).count();
  return E;
}

}  // namespace rb::fit::internal
