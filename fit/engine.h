// rotorbench fit (internal): the motor fit proper — problem set-up, the robust stage, the
// outlier rejection and noise estimate, the final least-squares stage, covariance and the
// uncertainty budget. FitRuns() (fit.h) wraps it; diagnostics are added in diagnose.cpp.
// Thread-safety: reentrant.
#pragma once

#include <Eigen/Core>
#include <memory>
#include <string>
#include <vector>

#include "fit/fit.h"
#include "fit/motor_cost.h"
#include "fit/prep.h"
#include "fit/start.h"

namespace rb::fit::internal {

/// One calibration source of the budget and its effect on the estimates.
struct BudgetSource {
  std::string name;
  Eigen::Matrix<double, model::kNumParams, 1> delta =
      Eigen::Matrix<double, model::kNumParams, 1>::Zero();  ///< 1σ shift of each parameter (SI)
};

/// What the engine found, before it is put into words.
struct EngineResult {
  FitSummary summary;  ///< parameters, covariances, runs, solver info (no diagnostics yet)
  StartValues start;
  ModelSpec spec;
  bool model_chosen_automatically = true;
  std::vector<const PreparedRun*> runs_used;
  std::vector<std::string> skipped;  ///< "run 7 (loaded): ..." lines
  /// Free motor parameters that the data cannot determine (numerically or by rule).
  std::array<bool, model::kNumParams> unidentified{};
  std::array<double, model::kNumParams> rel_se{};  ///< statistical SE / |value|
  double s2 = 1;             ///< residual variance factor
  bool converged = false;
  bool any_calibration = false;
  std::vector<BudgetSource> sources;
  std::vector<std::unique_ptr<PreparedRun>> prepared;
};

Result<EngineResult> RunEngine(const std::vector<RunData>& runs, const FitOptions& options);

}  // namespace rb::fit::internal
