// PredictRun: the fitted model's trajectories at a run's own sample times.
#include <fmt/format.h>

#include "fit/fit.h"
#include "fit/motor_cost.h"
#include "fit/prep.h"
#include "fit/start.h"

namespace rb::fit {

Result<RunPrediction> PredictRun(const FitSummary& fit, const RunData& run) {
  using internal::Channel;
  using model::RunKind;
  Result<internal::PreparedRun> prep = internal::PrepareRun(run);
  if (!prep.ok()) return prep.status();
  const internal::PreparedRun& p = *prep;
  const model::MotorParams mp = fit.Params();
  auto need = [&](int i) -> Status {
    const ParamResult& r = fit.params[static_cast<size_t>(i)];
    if (!r.identified || !std::isfinite(r.value) || r.value <= 0) {
      return Status::FailedPrecondition(fmt::format(
          "fit of motor '{}' has no value for {}; cannot predict run {} ({})", fit.motor,
          model::kParamNames[static_cast<size_t>(i)], run.id, model::RunKindName(run.kind)));
    }
    return Status::Ok();
  };
  const bool turning =
      run.kind == RunKind::kSpinUp || run.kind == RunKind::kCoastDown || run.kind == RunKind::kSteady;
  if (run.kind == RunKind::kFree || run.kind == RunKind::kLoaded) {
    return Status::Unsupported(fmt::format("run {} ({}): the model has no shaft load; no prediction",
                                           run.id, model::RunKindName(run.kind)));
  }
  if (turning) {
    for (int i : {model::kR, model::kKe, model::kJ, model::kTc, model::kB}) RB_RETURN_IF_ERROR(need(i));
  } else if (run.kind == RunKind::kLocked) {
    RB_RETURN_IF_ERROR(need(model::kR));
  } else {
    RB_RETURN_IF_ERROR(need(model::kKe));
  }

  double kappa = 1.0, inv_c = 0.0;
  for (const auto& [name, v] : fit.extra) {
    if (name == "rotating_resistance_factor" && std::isfinite(v.value)) kappa = v.value;
    if (name == "winding_heat_capacity_J_per_K" && v.value > 0) inv_c = 1.0 / v.value;
  }
  internal::ModelFlags flags{fit.model.brush_drop, fit.model.inductance && mp.L > 0,
                             fit.model.heating && inv_c > 0};
  double wmin = INFINITY;
  for (const internal::SpeedObs& o : p.speed) wmin = std::min(wmin, std::fabs(o.y));
  flags.friction_width = std::isfinite(wmin) ? std::clamp(wmin / 8.0, 0.5, 5.0) : 0.5;

  // Nuisance values: the fit's own for a fitted run, else estimates from the data.
  std::vector<internal::PreparedRun> one = {p};
  internal::StartValues sv = internal::EstimateStart(one, flags.vb);
  internal::RunStart start = sv.runs.front();
  const RunFit* fitted = nullptr;
  for (const RunFit& r : fit.runs) {
    if (r.run_id == run.id && r.kind == run.kind) fitted = &r;
  }
  auto nuisance = [&](const char* name, double fallback) {
    if (fitted) {
      for (const auto& [k, v] : fitted->nuisance) {
        if (k == name && std::isfinite(v)) return v;
      }
    }
    return fallback;
  };
  const bool connected_part = fit.params[model::kR].identified && std::isfinite(mp.R);
  internal::RunModel M = internal::BuildRunModel(p, start, mp, flags, connected_part, kappa, &run.samples);
  std::array<double, internal::kNumCore> core = {std::log(mp.R > 0 ? mp.R : 1.0),
                                                 std::log(mp.Ke > 0 ? mp.Ke : 1.0),
                                                 std::log(mp.J > 0 ? mp.J : 1.0),
                                                 std::log(mp.Tc > 0 ? mp.Tc : 1.0),
                                                 std::log(mp.b > 0 ? mp.b : 1.0)};
  std::array<double, internal::kNumExtra> extra = {flags.vb ? mp.Vb : 0.0,
                                                   std::log(mp.L > 0 ? mp.L : 1e-9),
                                                   std::log(inv_c > 0 ? inv_c : 1e-9)};
  std::array<double, internal::kNumNuisance> nuis = {0, nuisance("i_offset_A", start.i_offset), 0};
  auto logit_on = [&](double t) {
    if (!(p.on_hi > p.on_lo)) return 0.0;
    const double f = std::clamp((t - p.on_lo) / (p.on_hi - p.on_lo), 1e-6, 1 - 1e-6);
    return std::log(f / (1 - f));
  };
  switch (run.kind) {
    case RunKind::kSpinUp:
      nuis[0] = logit_on(nuisance("t_on_s", 0.5 * (p.on_lo + p.on_hi)));
      break;
    case RunKind::kCoastDown:
    case RunKind::kSteady:
      nuis[0] = nuisance("w0_rad_s", std::isfinite(start.w0) ? start.w0 : 0.0);
      break;
    case RunKind::kLocked: {
      const double rk = nuisance("R_position_ohm", std::isfinite(start.r_locked) ? start.r_locked : mp.R);
      nuis[0] = std::log(rk / mp.R);
      nuis[2] = logit_on(nuisance("t_on_s", 0.5 * (p.on_lo + p.on_hi)));
      break;
    }
    default:
      break;
  }
  internal::PlanSubsteps(&M, core.data(), extra.data(), nuis.data());
  internal::Weights w;
  w.inv_sigma.assign(M.obs.size(), 1.0);
  internal::RunCost cost{&M, &w, nullptr};
  std::vector<double> res(M.obs.size());
  if (!cost.Eval<double>(core.data(), extra.data(), nuis.data(), res.data())) {
    return Status::FailedPrecondition(
        fmt::format("run {}: the fitted model diverged on this run's input", run.id));
  }
  RunPrediction out;
  const size_t n = run.samples.size();
  out.t.resize(n);
  out.speed.assign(n, NAN);
  out.current.assign(n, NAN);
  out.voltage.assign(n, NAN);
  for (size_t k = 0; k < n; ++k) {
    out.t[k] = run.samples[k].t;
    const bool conn = internal::ConnectedAt(p, out.t[k]);
    if (run.kind == RunKind::kLocked) {
      out.speed[k] = 0.0;
      if (!conn) out.voltage[k] = 0.0;
    }
    if (run.kind == RunKind::kSpinUp && !conn) out.voltage[k] = 0.0;  // at rest, open
    if (run.kind == RunKind::kGenerator) out.current[k] = 0.0;
  }
  for (size_t j = 0; j < M.obs.size(); ++j) {
    const internal::RunModel::Obs& o = M.obs[j];
    if (o.sample < 0) continue;
    const double v = -res[j];
    switch (o.channel) {
      case Channel::kSpeed: out.speed[static_cast<size_t>(o.sample)] = v; break;
      case Channel::kCurrent: out.current[static_cast<size_t>(o.sample)] = v; break;
      case Channel::kVoltage: out.voltage[static_cast<size_t>(o.sample)] = v; break;
    }
  }
  return out;
}

}  // namespace rb::fit
