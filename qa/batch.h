// rotorbench qa: a batch of motors against a spec — every motor's check, and per quantity
// the mean, standard deviation, range, Cpk with a confidence interval, outliers by the
// generalized ESD test, and the batch verdict.
//
// Batch verdict (with c the spec's accept_number, default 0): "fail" (reject) when more
// than c motors fail; "pass" (accept) when failing plus inconclusive plus unmeasured
// motors are at most c; otherwise "inconclusive" — re-measuring the inconclusive motors
// decides it. SI values. Thread-safety: SummarizeBatch is pure; CheckBatch uses the
// Database it is given (one thread at a time).
#pragma once

#include <string>
#include <vector>

#include "qa/check.h"
#include "qa/stats.h"

namespace rb::qa {

struct BatchOptions {
  CheckOptions check;
  double outlier_alpha = 0.05;  ///< significance of the outlier test
  double confidence = 0.95;     ///< two-sided confidence of the Cpk interval
  int small_n = 30;             ///< fewer motors than this: small-sample caution on Cpk
};

struct QuantityStats {
  Limit limit;
  std::vector<int> motors;     ///< indices into BatchSummary::motors that were measured
  std::vector<double> values;  ///< their values [SI], parallel to `motors`
  Describe describe;
  Capability cpk;
  OutlierResult outliers;  ///< indices refer to `values`
  int pass = 0, fail = 0, inconclusive = 0, not_measured = 0;

  /// True when motor `m` (index into BatchSummary::motors) is flagged as an outlier.
  bool IsOutlier(int m) const;
};

struct BatchSummary {
  std::string batch;
  std::string spec_name;
  int accept_number = 0;
  BatchOptions options;
  std::vector<MotorCheck> motors;
  std::vector<std::string> unmeasured;  ///< "LABEL: reason" for motors that could not be checked
  std::vector<QuantityStats> stats;     ///< in spec order
  int pass = 0, fail = 0, inconclusive = 0;
  Verdict verdict = Verdict::kNotMeasured;
  std::string verdict_text;  ///< one line: what was decided and why
  std::string outlier_test;  ///< the test's name and settings, for the report
};

/// Summarises checks already made (one per motor).
BatchSummary SummarizeBatch(const std::string& batch, const Spec& spec,
                            std::vector<MotorCheck> motors, std::vector<std::string> unmeasured,
                            const BatchOptions& options);

/// Checks every motor of the batch (their latest fits) and summarises. Motors without a
/// fit are listed as unmeasured; NotFound when the batch has no motors.
Result<BatchSummary> CheckBatch(storage::Database& db, const std::string& batch, const Spec& spec,
                                const BatchOptions& options);

}  // namespace rb::qa
