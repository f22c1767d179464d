// rotorbench fit (internal): the nonlinear least-squares core shared by the motor fit and
// the NIST StRD checks.
//
// Solve() runs Ceres' Levenberg–Marquardt on a problem the caller has built, then takes
// Gauss–Newton steps from the exact (automatic-differentiation) Jacobian until the step no
// longer lowers the cost, and finally factors the Jacobian once more for the covariance:
//   * the Jacobian is streamed block by block through a Householder QR, so memory stays
//     O(rows of one residual block · p) however many residuals there are;
//   * columns are scaled to unit norm before an SVD of the p×p triangular factor; singular
//     values below rank_tolerance·σ_max span the null space (directions the data cannot
//     see), and a parameter with a component there is reported as not identifiable;
//   * cov_unscaled = (JᵀJ)⁺ for the residuals exactly as the cost functions return them.
//     Callers scale by s² = RSS/(n − p) or whiten residuals by known σ (Ceres' own
//     Covariance does not scale either).
// Robust losses attached to residual blocks are ignored by the polish and the covariance;
// callers that want robust estimates implement them inside the cost functions and run a
// final plain pass. Only fit/ includes this header (it includes Ceres).
// Thread-safety: one Problem per call; no shared state.
#pragma once

#include <ceres/ceres.h>

#include <Eigen/Core>
#include <functional>
#include <string>
#include <vector>

#include "base/status.h"

namespace rb::fit::lsq {

/// One parameter block as the caller added it to the problem.
struct Block {
  double* values = nullptr;
  int size = 0;
  std::vector<int> fixed;     ///< indices held at their value (all of them = constant block)
  std::vector<double> lower;  ///< per index, -inf = none (empty vector = no bounds)
  std::vector<double> upper;  ///< per index, +inf = none
};

struct Options {
  int max_iterations = 200;
  double function_tolerance = 1e-12;
  double gradient_tolerance = 1e-14;
  double parameter_tolerance = 1e-12;
  int polish_iterations = 8;     ///< Gauss–Newton steps after LM (0 = none)
  bool polish = true;
  int num_threads = 1;
  double rank_tolerance = 1e-10;  ///< relative singular value of the scaled Jacobian
  /// Residuals evaluated more accurately than the cost functions do (e.g. in long
  /// double), used by the polish and for the final RSS. Fills `residuals` for one block.
  std::function<bool(ceres::ResidualBlockId, double* residuals)> precise_residuals;
  /// Extra right-hand sides: for each residual block, a rows × num_perturbations matrix
  /// Δr of residual changes caused by perturbed inputs. Solve() returns the first-order
  /// parameter changes Δθ = −(JᵀJ)⁺JᵀΔr (the sensitivity of the estimate to each input).
  int num_perturbations = 0;
  std::function<void(ceres::ResidualBlockId, int rows, Eigen::MatrixXd* dr)> perturbations;
  bool run_solver = true;  ///< false: only polish/covariance at the given values
  bool covariance = true;  ///< false: stop after the solver (no polish, no covariance)
  /// Block-sparse normal equations (few shared parameters, many per-block ones) instead
  /// of a dense QR of the whole Jacobian (kept for small problems: most accurate).
  bool sparse = false;
};

struct Result {
  std::string termination = "not run";
  bool converged = false;  ///< Ceres reported convergence (or polish reached a fixed point)
  int iterations = 0;      ///< LM iterations + polish steps taken
  int polish_steps = 0;
  double seconds = 0;
  double rss = 0;          ///< Σ r² at the final point (precise residuals if given)
  int num_residuals = 0;   ///< n
  int num_free = 0;        ///< p (free parameters, bounded ones at a bound excluded)
  /// (block, index) of each free parameter, in covariance order.
  std::vector<std::pair<int, int>> free_params;
  Eigen::MatrixXd cov_unscaled;    ///< (JᵀJ)⁺, p × p
  Eigen::VectorXd singular_values;  ///< of the column-scaled Jacobian, descending
  int rank = 0;
  std::vector<bool> identifiable;  ///< per free parameter: no component in the null space
  Eigen::MatrixXd sensitivities;   ///< p × num_perturbations, Δθ per perturbation
  double condition = 0;            ///< σ_max/σ_min over the retained singular values

  /// Index of (block, index) among the free parameters, or −1.
  int FreeIndex(int block, int index) const;
};

/// Adds the blocks to the problem's bookkeeping (manifolds for partly fixed blocks, bounds,
/// constant blocks). Call after the residual blocks are added.
void ConfigureBlocks(ceres::Problem* problem, const std::vector<Block>& blocks);

/// Solves, polishes and computes the covariance. The problem must contain only parameter
/// blocks listed in `blocks`. Errors: no residuals, non-finite cost at the start.
Result Solve(ceres::Problem* problem, const std::vector<Block>& blocks, const Options& options);

/// Residual sum of squares at the current values (cost functions only, no loss).
double ResidualSumOfSquares(ceres::Problem* problem);

}  // namespace rb::fit::lsq
