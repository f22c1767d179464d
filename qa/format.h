// rotorbench qa: the printed forms of checks, batches and sampling plans — text tables,
// CSV, JSON (HTML lives in qa/html.h). Values appear in the spec's own units; a value and
// its expanded uncertainty are rounded together (U to two significant digits, GUM §7.2.6).
// Functions return text; only cli/ prints. Pure; thread-safe.
#pragma once

#include <nlohmann/json_fwd.hpp>
#include <string>

#include "qa/batch.h"
#include "qa/check.h"
#include "qa/sampling.h"

namespace rb::qa {

/// "1012.3 ± 8.1" — U to two significant digits, the value to the same decimal place.
std::string FormatValueU(double value, double expanded_u);
/// "950 … 1050", "≤ 150", "≥ 5" in the limit's unit.
std::string FormatLimits(const Limit& limit);

/// One motor's check as a text table with the overall verdict (what `qa check` and
/// `record --spec` print).
std::string FormatCheck(const MotorCheck& check);
nlohmann::json CheckJson(const MotorCheck& check);

std::string FormatBatchTable(const BatchSummary& b);
std::string FormatBatchCsv(const BatchSummary& b);
nlohmann::json BatchJson(const BatchSummary& b);

std::string FormatPlan(const SamplingPlan& plan);
/// {"n", "c", "lot", "aql_percent", "ltpd_percent", "alpha", "beta", "oc_model",
///  "pa_at_aql", "pa_at_ltpd", "oc": [{"p_percent", "pa"}...]}
nlohmann::json PlanJson(const SamplingPlan& plan);

/// The brief bench caution printed wherever we ask someone to run motors.
inline constexpr const char* kBenchCaution =
    "Caution: clamp the motor and keep hands, hair and loose clothing away from spinning "
    "parts; wear eye protection; follow the codes and workplace rules that apply where you "
    "work.";

}  // namespace rb::qa
