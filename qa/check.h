// rotorbench qa: one motor against a spec — measured ± expanded uncertainty, limits,
// margin and a verdict per quantity, and an overall verdict.
//
// Decision rules (docs/qa-spec.md §decision rules):
//  * guard band (default, after ISO 14253-1): with U = k·u the expanded uncertainty,
//    "pass" (conformance proven) when the whole interval [y − U, y + U] lies inside the
//    closed specification zone; "fail" (non-conformance proven) when it lies wholly
//    outside; otherwise "inconclusive".
//  * simple: "pass" when LSL ≤ y ≤ USL, else "fail"; the uncertainty is shown, not used.
// Overall: any fail → fail; else any inconclusive or unmeasured quantity → inconclusive;
// else pass. SI values throughout. Thread-safety: pure functions, except CheckMotor which
// uses the Database it is given (one thread at a time).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "fit/fit.h"
#include "qa/spec.h"

namespace rb::storage {
class Database;
}

namespace rb::qa {

enum class Verdict { kPass, kFail, kInconclusive, kNotMeasured };
const char* VerdictName(Verdict v);  ///< "pass", "fail", "inconclusive", "not measured"
/// "conformance proven", "non-conformance proven", ... (guard band); "inside the limits", ...
const char* VerdictMeaning(Verdict v, bool guard_band);

enum class DecisionRule { kGuardBand, kSimple };
const char* RuleName(DecisionRule r);  ///< "guard-band", "simple"
/// Parses "guard-band" or "simple"; the error names --rule and the accepted names.
Result<DecisionRule> ParseRule(std::string_view name);

struct Decision {
  Verdict verdict = Verdict::kNotMeasured;
  /// Signed distance from y to the nearest limit (positive inside the zone) [SI].
  double margin = 0;
};
/// The decision for a measured value y with expanded uncertainty U ≥ 0.
Decision Decide(double y, double expanded_u, std::optional<double> lower,
                std::optional<double> upper, DecisionRule rule);

struct CheckOptions {
  DecisionRule rule = DecisionRule::kGuardBand;
  /// Coverage factor k: U = k·u. k = 2 covers about 95 % for a normal distribution (GUM).
  double coverage_factor = 2.0;
};

/// A spec quantity's value from a fit, with its standard uncertainty (SI).
struct Measurement {
  bool available = false;
  double value = 0;
  double u = 0;      ///< standard (1σ) combined uncertainty
  std::string note;  ///< why it is not available
};
Measurement Measure(const fit::FitSummary& fit, const Limit& limit);

struct QuantityCheck {
  Limit limit;
  Measurement measured;
  double expanded_u = 0;  ///< U = k·u [SI]
  double margin = 0;      ///< see Decision::margin [SI]
  Verdict verdict = Verdict::kNotMeasured;
};

struct MotorCheck {
  std::string motor;
  std::int64_t fit_id = 0;  ///< 0 when the fit did not come from a database
  std::string fit_created_utc;
  std::string spec_name;
  CheckOptions options;
  std::vector<QuantityCheck> items;  ///< in spec order
  Verdict overall = Verdict::kNotMeasured;
  std::vector<std::string> notes;  ///< a stale fit, fit diagnostics worth knowing

  const QuantityCheck* Find(SpecQuantity q, double voltage) const;
};

/// Checks a fit against a spec.
MotorCheck CheckFit(const fit::FitSummary& fit, const Spec& spec, const CheckOptions& options);

/// Checks the motor's latest stored fit. If it has none: FailedPrecondition telling the
/// user to fit it first. A fit older than some of the motor's complete runs is used with
/// a note naming those runs.
Result<MotorCheck> CheckMotor(storage::Database& db, const std::string& label, const Spec& spec,
                              const CheckOptions& options);

}  // namespace rb::qa
