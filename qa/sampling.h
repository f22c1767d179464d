// rotorbench qa: single sampling plans by attributes — inspect n motors of a lot of N,
// accept the lot when at most c of them are defective.
//
// The plan is computed, not looked up: the smallest n (and with it c) whose operating
// characteristic Pa(p) meets both risks, Pa(AQL) ≥ 1 − α and Pa(LTPD) ≤ β. Pa comes from
// the binomial distribution (sampling from a process, or a lot much larger than the
// sample); when the binomial plan would inspect more than a tenth of the lot, the lot is
// small and the plan is recomputed with the hypergeometric distribution (sampling without
// replacement from exactly N units with D = p·N defectives; non-integer D is interpolated
// linearly between the neighbouring integers). Fractions p are 0..1 here; the CLI speaks
// percent. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <vector>

#include "base/status.h"

namespace rb::qa {

/// P(at most c defectives among n) when each unit is defective with probability p.
double BinomialAcceptance(int n, int c, double p);

/// P(at most c defectives among n drawn without replacement from a lot of `lot` units of
/// which `defectives` are defective); non-integer `defectives` interpolates linearly.
double HypergeometricAcceptance(std::int64_t lot, int n, int c, double defectives);

enum class OcModel { kBinomial, kHypergeometric };
const char* OcModelName(OcModel m);  // "binomial", "hypergeometric"

struct PlanOptions {
  std::int64_t lot = 0;  ///< lot size N (≥ 2)
  double aql = 0;        ///< acceptable quality level, fraction defective (0..1)
  double ltpd = 0;       ///< lot tolerance fraction defective (0..1), > aql
  double alpha = 0.05;   ///< producer's risk: P(reject | p = AQL) at most this
  double beta = 0.10;    ///< consumer's risk: P(accept | p = LTPD) at most this
  /// The binomial plan is kept when n ≤ this fraction of the lot; otherwise the lot is
  /// "small" and the hypergeometric OC is used (rule of thumb; common practice, no source).
  double small_lot_fraction = 0.10;
  int oc_points = 41;  ///< points on the OC curve, p from 0 to ~1.5·LTPD
};

/// Checks ranges; the message names the option (--lot, --aql, ...).
Status Validate(const PlanOptions& o);

struct OcPoint {
  double p = 0;   ///< fraction defective
  double pa = 0;  ///< probability of accepting the lot
};

struct SamplingPlan {
  PlanOptions options;
  int n = 0;  ///< sample size
  int c = 0;  ///< acceptance number: accept with ≤ c defectives, reject with ≥ c + 1
  OcModel model = OcModel::kBinomial;
  double pa_aql = 0;   ///< Pa at the AQL (≥ 1 − α)
  double pa_ltpd = 0;  ///< Pa at the LTPD (≤ β)
  std::vector<OcPoint> oc;

  double Acceptance(double p) const;  ///< Pa(p) with this plan's model
};

/// The smallest single sampling plan meeting both risks. FailedPrecondition when no plan
/// with n ≤ N exists (AQL and LTPD too close for this lot: inspect every unit).
Result<SamplingPlan> FindPlan(const PlanOptions& options);

}  // namespace rb::qa
