// Decision rules, measuring spec quantities from a fit, checking one motor.
#include "qa/check.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>

#include "model/characteristics.h"
#include "storage/storage.h"

namespace rb::qa {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

Measurement FromParam(const fit::FitSummary& fit, int index, const char* what) {
  const fit::ParamResult& p = fit.params[static_cast<size_t>(index)];
  Measurement m;
  if (!p.fitted || !std::isfinite(p.value)) {
    m.note = fmt::format("the fit held {} fixed; it was not measured", what);
    return m;
  }
  m.available = true;
  m.value = p.value;
  m.u = p.u_combined;
  return m;
}

}  // namespace

const char* VerdictName(Verdict v) {
  switch (v) {
    case Verdict::kPass:
      return "pass";
    case Verdict::kFail:
      return "fail";
    case Verdict::kInconclusive:
      return "inconclusive";
    case Verdict::kNotMeasured:
      return "not measured";
  }
  return "?";
}

const char* VerdictMeaning(Verdict v, bool guard_band) {
  switch (v) {
    case Verdict::kPass:
      return guard_band ? "conformance proven" : "inside the limits";
    case Verdict::kFail:
      return guard_band ? "non-conformance proven" : "outside the limits";
    case Verdict::kInconclusive:
      return "the uncertainty interval straddles a limit";
    case Verdict::kNotMeasured:
      return "the fit does not give this quantity";
  }
  return "?";
}

const char* RuleName(DecisionRule r) {
  return r == DecisionRule::kGuardBand ? "guard-band" : "simple";
}

Result<DecisionRule> ParseRule(std::string_view name) {
  if (name == "guard-band") return DecisionRule::kGuardBand;
  if (name == "simple") return DecisionRule::kSimple;
  return Status::InvalidArgument(fmt::format(
      "--rule {}: unknown decision rule; expected guard-band (uncertainty-aware, the default) "
      "or simple (inside the limits)",
      name));
}

Decision Decide(double y, double expanded_u, std::optional<double> lower,
                std::optional<double> upper, DecisionRule rule) {
  Decision d;
  if (!std::isfinite(y)) return d;
  const double lo = lower.value_or(-kInf), hi = upper.value_or(kInf);
  d.margin = std::min(y - lo, hi - y);
  if (rule == DecisionRule::kSimple) {
    d.verdict = (y >= lo && y <= hi) ? Verdict::kPass : Verdict::kFail;
    return d;
  }
  const double u = std::fabs(expanded_u);
  if (y - u >= lo && y + u <= hi) {
    d.verdict = Verdict::kPass;
  } else if (y + u < lo || y - u > hi) {
    d.verdict = Verdict::kFail;
  } else {
    d.verdict = Verdict::kInconclusive;
  }
  return d;
}

Measurement Measure(const fit::FitSummary& fit, const Limit& limit) {
  Measurement m;
  switch (limit.quantity) {
    case SpecQuantity::kKv: {
      m = FromParam(fit, model::kKe, "Ke");
      if (m.available) {
        if (!(m.value > 0)) return {false, 0, 0, "Ke is not positive; Kv is undefined"};
        m.u = m.u / (m.value * m.value);  // Kv = 1/Ke: u(Kv) = u(Ke)/Ke²
        m.value = 1.0 / m.value;
      }
      return m;
    }
    case SpecQuantity::kKt:
      return FromParam(fit, model::kKe, "Ke (= Kt)");
    case SpecQuantity::kR20:
      if (!fit.R20 || !std::isfinite(*fit.R20)) {
        m.note = "the fit has no winding temperature, so R cannot be referred to 20 °C";
        return m;
      }
      m.available = true;
      m.value = *fit.R20;
      m.u = fit.R20_u && std::isfinite(*fit.R20_u) ? *fit.R20_u : 0.0;
      return m;
    case SpecQuantity::kFrictionTorque:
      return FromParam(fit, model::kTc, "Tc");
    case SpecQuantity::kInertia:
      return FromParam(fit, model::kJ, "J");
    case SpecQuantity::kNoLoadSpeed:
    case SpecQuantity::kNoLoadCurrent:
    case SpecQuantity::kStallCurrent:
    case SpecQuantity::kStallTorque: {
      if (!fit.params[model::kR].fitted || !fit.params[model::kKe].fitted) {
        m.note = "the fit lacks R or Ke, so the steady-state figures are unknown";
        return m;
      }
      const model::CharacteristicsU c =
          model::ComputeCharacteristicsU(fit.Estimate(), limit.voltage);
      const model::CharacteristicIndex index =
          limit.quantity == SpecQuantity::kNoLoadSpeed     ? model::kNoLoadSpeed
          : limit.quantity == SpecQuantity::kNoLoadCurrent ? model::kNoLoadCurrent
          : limit.quantity == SpecQuantity::kStallCurrent  ? model::kStallCurrent
                                                           : model::kStallTorque;
      const model::Uncertain v = c.Get(index);
      if (!std::isfinite(v.value)) {
        m.note = "not defined for this parameter set";
        return m;
      }
      return {true, v.value, v.u, ""};
    }
  }
  return m;
}

const QuantityCheck* MotorCheck::Find(SpecQuantity q, double voltage) const {
  for (const QuantityCheck& c : items) {
    if (c.limit.quantity == q && c.limit.voltage == voltage) return &c;
  }
  return nullptr;
}

MotorCheck CheckFit(const fit::FitSummary& fit, const Spec& spec, const CheckOptions& options) {
  MotorCheck out;
  out.motor = fit.motor;
  out.spec_name = spec.name;
  out.options = options;
  bool any_fail = false, any_open = false;
  for (const Limit& limit : spec.limits) {
    QuantityCheck qc;
    qc.limit = limit;
    qc.measured = Measure(fit, limit);
    if (qc.measured.available) {
      qc.expanded_u = options.coverage_factor * qc.measured.u;
      const Decision d =
          Decide(qc.measured.value, qc.expanded_u, limit.lower, limit.upper, options.rule);
      qc.verdict = d.verdict;
      qc.margin = d.margin;
    }
    any_fail |= qc.verdict == Verdict::kFail;
    any_open |= qc.verdict == Verdict::kInconclusive || qc.verdict == Verdict::kNotMeasured;
    out.items.push_back(std::move(qc));
  }
  out.overall = any_fail ? Verdict::kFail : any_open ? Verdict::kInconclusive : Verdict::kPass;
  for (const fit::Diagnostic& d : fit.diagnostics) {
    if (d.severity == fit::Diagnostic::Severity::kInfo) continue;
    out.notes.push_back(d.param.empty() ? "fit: " + d.message
                                        : fmt::format("fit ({}): {}", d.param, d.message));
  }
  return out;
}

Result<MotorCheck> CheckMotor(storage::Database& db, const std::string& label, const Spec& spec,
                              const CheckOptions& options) {
  Result<storage::Motor> motor = db.FindMotor(label);
  if (!motor.ok()) return motor.status();
  Result<std::vector<storage::FitRecord>> fits = db.ListFits(motor->id);
  if (!fits.ok()) return fits.status();
  if (fits->empty()) {
    return Status::FailedPrecondition(
        fmt::format("motor '{}' has no fit yet; fit it first (rotorbench fit {})", label, label));
  }
  const storage::FitRecord& latest = *std::max_element(
      fits->begin(), fits->end(),
      [](const storage::FitRecord& a, const storage::FitRecord& b) { return a.id < b.id; });
  Result<fit::FitSummary> summary = fit::LoadFit(db, latest.id);
  if (!summary.ok()) return summary.status();
  if (summary->motor.empty()) summary->motor = label;
  MotorCheck check = CheckFit(*summary, spec, options);
  check.motor = label;
  check.fit_id = latest.id;
  check.fit_created_utc = latest.created_utc;
  Result<std::vector<storage::Run>> runs = db.ListRuns(motor->id);
  if (!runs.ok()) return runs.status();
  const std::set<std::int64_t> used(latest.run_ids.begin(), latest.run_ids.end());
  std::string newer;
  for (const storage::Run& r : *runs) {
    if (r.status == storage::RunStatus::kComplete && !used.count(r.id) &&
        r.started_utc > latest.created_utc) {
      newer += (newer.empty() ? "" : ", ") + std::to_string(r.id);
    }
  }
  if (!newer.empty()) {
    check.notes.push_back(
        fmt::format("fit {} predates run(s) {}; refit to include them (rotorbench fit {})",
                    latest.id, newer, label));
  }
  return check;
}

}  // namespace rb::qa
