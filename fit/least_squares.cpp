// The least-squares core: Ceres LM, Gauss–Newton polish, streamed QR, SVD covariance.
#include "fit/least_squares.h"

#include <Eigen/Dense>
#include <Eigen/SVD>
#include <chrono>
#include <cmath>
#include <limits>
#include <unordered_map>

namespace rb::fit::lsq {
namespace {

constexpr int kChunkRows = 1024;

bool IsFixed(const Block& b, int i) {
  for (int f : b.fixed) {
    if (f == i) return true;
  }
  return false;
}

bool AtBound(const Block& b, int i) {
  const double v = b.values[i];
  auto near = [v](double bound) {
    return std::isfinite(bound) && std::fabs(v - bound) <= 1e-12 * std::max(1.0, std::fabs(bound));
  };
  return (!b.lower.empty() && near(b.lower[static_cast<size_t>(i)])) ||
         (!b.upper.empty() && near(b.upper[static_cast<size_t>(i)]));
}

/// One pass over all residual blocks: the triangular factor of [J r] and Jᵀ·Δr.
struct Pass {
  Eigen::MatrixXd R;  ///< p × p
  Eigen::VectorXd z;  ///< Qᵀr, p
  Eigen::MatrixXd G;  ///< Jᵀ·Δr, p × k
  double rss = 0;
  int rows = 0;
  bool ok = false;
};

class Engine {
 public:
  Engine(ceres::Problem* problem, const std::vector<Block>& blocks, const Options& options)
      : problem_(problem), blocks_(blocks), options_(options) {
    for (size_t b = 0; b < blocks.size(); ++b) index_[blocks[b].values] = static_cast<int>(b);
  }

  /// Chooses the free parameters (not fixed, not at a bound) and their columns.
  void SelectFree(Result* out) {
    out->free_params.clear();
    columns_.assign(blocks_.size(), {});
    for (size_t b = 0; b < blocks_.size(); ++b) {
      const Block& blk = blocks_[b];
      columns_[b].assign(static_cast<size_t>(blk.size), -1);
      for (int i = 0; i < blk.size; ++i) {
        if (IsFixed(blk, i) || AtBound(blk, i)) continue;
        columns_[b][static_cast<size_t>(i)] = static_cast<int>(out->free_params.size());
        out->free_params.emplace_back(static_cast<int>(b), i);
      }
    }
    p_ = static_cast<int>(out->free_params.size());
  }

  int p() const { return p_; }

  Pass Run(bool with_perturbations) {
    Pass pass;
    const int p = p_;
    const int k = with_perturbations ? options_.num_perturbations : 0;
    pass.G = Eigen::MatrixXd::Zero(p, k);
    Eigen::MatrixXd top = Eigen::MatrixXd::Zero(p + 1, p + 1);
    Eigen::MatrixXd buf(kChunkRows + p + 1, p + 1);
    int filled = 0;
    auto flush = [&]() {
      if (filled == 0) return;
      buf.topRows(p + 1) = top;
      Eigen::HouseholderQR<Eigen::MatrixXd> qr(buf.topRows(p + 1 + filled));
      top = qr.matrixQR().topRows(p + 1).triangularView<Eigen::Upper>();
      filled = 0;
    };
    std::vector<ceres::ResidualBlockId> ids;
    problem_->GetResidualBlocks(&ids);
    std::vector<double> r, jac_storage;
    std::vector<double*> jacs;
    std::vector<double*> params;
    Eigen::MatrixXd dr;
    for (ceres::ResidualBlockId id : ids) {
      const ceres::CostFunction* cost = problem_->GetCostFunctionForResidualBlock(id);
      problem_->GetParameterBlocksForResidualBlock(id, &params);
      const int m = cost->num_residuals();
      const std::vector<int32_t>& sizes = cost->parameter_block_sizes();
      r.assign(static_cast<size_t>(m), 0.0);
      size_t total = 0;
      std::vector<int> bidx(params.size(), -1);
      for (size_t j = 0; j < params.size(); ++j) {
        auto it = index_.find(params[j]);
        if (it != index_.end()) bidx[j] = it->second;
        total += static_cast<size_t>(m) * static_cast<size_t>(sizes[j]);
      }
      jac_storage.assign(total, 0.0);
      jacs.assign(params.size(), nullptr);
      size_t off = 0;
      for (size_t j = 0; j < params.size(); ++j) {
        bool any_free = false;
        if (bidx[j] >= 0) {
          for (int c : columns_[static_cast<size_t>(bidx[j])]) any_free = any_free || c >= 0;
        }
        if (any_free) jacs[j] = jac_storage.data() + off;
        off += static_cast<size_t>(m) * static_cast<size_t>(sizes[j]);
      }
      if (!cost->Evaluate(params.data(), r.data(), jacs.data())) return pass;
      if (options_.precise_residuals && !options_.precise_residuals(id, r.data())) return pass;
      if (k > 0) {
        dr = Eigen::MatrixXd::Zero(m, k);
        if (options_.perturbations) options_.perturbations(id, m, &dr);
      }
      for (int row = 0; row < m; ++row) {
        if (filled == kChunkRows) flush();
        auto line = buf.row(p + 1 + filled);
        line.setZero();
        for (size_t j = 0; j < params.size(); ++j) {
          if (!jacs[j]) continue;
          const std::vector<int>& cols = columns_[static_cast<size_t>(bidx[j])];
          const double* jr = jacs[j] + static_cast<size_t>(row) * static_cast<size_t>(sizes[j]);
          for (int i = 0; i < sizes[j]; ++i) {
            const int c = cols[static_cast<size_t>(i)];
            if (c >= 0) line(c) = jr[i];
          }
        }
        const double rv = r[static_cast<size_t>(row)];
        if (!std::isfinite(rv)) return pass;
        line(p) = rv;
        pass.rss += rv * rv;
        if (k > 0) pass.G.noalias() += line.head(p).transpose() * dr.row(row);
        ++filled;
      }
      pass.rows += m;
    }
    flush();
    pass.R = top.topLeftCorner(p, p);
    pass.z = top.col(p).head(p);
    pass.ok = true;
    return pass;
  }

  double Rss() {
    if (!options_.precise_residuals) return ResidualSumOfSquares(problem_);
    std::vector<ceres::ResidualBlockId> ids;
    problem_->GetResidualBlocks(&ids);
    std::vector<double> r;
    double rss = 0;
    for (ceres::ResidualBlockId id : ids) {
      r.assign(static_cast<size_t>(problem_->GetCostFunctionForResidualBlock(id)->num_residuals()),
               0.0);
      if (!options_.precise_residuals(id, r.data())) return NAN;
      for (double v : r) rss += v * v;
    }
    return rss;
  }

  double Get(const std::pair<int, int>& fp) const {
    return blocks_[static_cast<size_t>(fp.first)].values[fp.second];
  }
  void Set(const std::pair<int, int>& fp, double v) {
    blocks_[static_cast<size_t>(fp.first)].values[fp.second] = v;
  }
  /// Clamps to the bounds; returns false if clamping was needed.
  bool Clamp(const std::pair<int, int>& fp) {
    const Block& b = blocks_[static_cast<size_t>(fp.first)];
    double& v = b.values[fp.second];
    const size_t i = static_cast<size_t>(fp.second);
    bool ok = true;
    if (!b.lower.empty() && v < b.lower[i]) v = b.lower[i], ok = false;
    if (!b.upper.empty() && v > b.upper[i]) v = b.upper[i], ok = false;
    return ok;
  }

 private:
  ceres::Problem* problem_;
  const std::vector<Block>& blocks_;
  const Options& options_;
  std::unordered_map<const double*, int> index_;
  std::vector<std::vector<int>> columns_;
  int p_ = 0;
};

/// SVD of the column-scaled triangular factor.
struct Decomposition {
  Eigen::VectorXd scale;  ///< D: column scale (1/‖column‖)
  Eigen::MatrixXd U, V;
  Eigen::VectorXd s;
  int rank = 0;
};

Decomposition Decompose(const Eigen::MatrixXd& R, double tol) {
  Decomposition d;
  const int p = static_cast<int>(R.cols());
  d.scale = Eigen::VectorXd::Ones(p);
  for (int j = 0; j < p; ++j) {
    const double n = R.col(j).norm();
    if (n > 0 && std::isfinite(n)) d.scale(j) = 1.0 / n;
  }
  const Eigen::MatrixXd A = R * d.scale.asDiagonal();
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(A, Eigen::ComputeFullU | Eigen::ComputeFullV);
  d.U = svd.matrixU();
  d.V = svd.matrixV();
  d.s = svd.singularValues();
  const double smax = d.s.size() ? d.s(0) : 0.0;
  for (int i = 0; i < d.s.size(); ++i) {
    if (d.s(i) > tol * smax && d.s(i) > 0) ++d.rank;
  }
  return d;
}

}  // namespace

int Result::FreeIndex(int block, int index) const {
  for (size_t k = 0; k < free_params.size(); ++k) {
    if (free_params[k].first == block && free_params[k].second == index) {
      return static_cast<int>(k);
    }
  }
  return -1;
}

void ConfigureBlocks(ceres::Problem* problem, const std::vector<Block>& blocks) {
  for (const Block& b : blocks) {
    if (!problem->HasParameterBlock(b.values)) continue;
    if (static_cast<int>(b.fixed.size()) >= b.size) {
      problem->SetParameterBlockConstant(b.values);
      continue;
    }
    if (!b.fixed.empty()) problem->SetManifold(b.values, new ceres::SubsetManifold(b.size, b.fixed));
    for (int i = 0; i < b.size; ++i) {
      if (IsFixed(b, i)) continue;
      const size_t k = static_cast<size_t>(i);
      if (!b.lower.empty() && std::isfinite(b.lower[k])) {
        problem->SetParameterLowerBound(b.values, i, b.lower[k]);
      }
      if (!b.upper.empty() && std::isfinite(b.upper[k])) {
        problem->SetParameterUpperBound(b.values, i, b.upper[k]);
      }
    }
  }
}

double ResidualSumOfSquares(ceres::Problem* problem) {
  ceres::Problem::EvaluateOptions eo;
  eo.apply_loss_function = false;
  double cost = 0;
  if (!problem->Evaluate(eo, &cost, nullptr, nullptr, nullptr)) return NAN;
  return 2.0 * cost;
}

Result Solve(ceres::Problem* problem, const std::vector<Block>& blocks, const Options& options) {
  const auto t0 = std::chrono::steady_clock::now();
  Result out;
  out.num_residuals = problem->NumResiduals();

  if (options.run_solver) {
    ceres::Solver::Options so;
    so.minimizer_type = ceres::TRUST_REGION;
    so.trust_region_strategy_type = ceres::LEVENBERG_MARQUARDT;
    const long long work = static_cast<long long>(problem->NumResiduals()) *
                           static_cast<long long>(problem->NumParameters());
    if (work <= 4'000'000 && !options.sparse) {
      so.linear_solver_type = ceres::DENSE_QR;
    } else if (ceres::IsSparseLinearAlgebraLibraryTypeAvailable(ceres::SUITE_SPARSE)) {
      so.linear_solver_type = ceres::SPARSE_NORMAL_CHOLESKY;
    } else {
      so.linear_solver_type = ceres::DENSE_NORMAL_CHOLESKY;
    }
    so.max_num_iterations = options.max_iterations;
    so.function_tolerance = options.function_tolerance;
    so.gradient_tolerance = options.gradient_tolerance;
    so.parameter_tolerance = options.parameter_tolerance;
    so.num_threads = std::max(1, options.num_threads);
    so.logging_type = ceres::SILENT;
    so.minimizer_progress_to_stdout = false;
    ceres::Solver::Summary summary;
    ceres::Solve(so, problem, &summary);
    out.iterations = static_cast<int>(summary.iterations.size()) - 1;
    out.termination = ceres::TerminationTypeToString(summary.termination_type);
    out.converged = summary.termination_type == ceres::CONVERGENCE;
    if (summary.termination_type == ceres::FAILURE) {
      out.termination += ": " + summary.message;
    }
  } else {
    out.termination = "not run";
  }

  Engine engine(problem, blocks, options);
  engine.SelectFree(&out);
  const int p = engine.p();
  out.num_free = p;
  if (!options.covariance) {
    out.rss = ResidualSumOfSquares(problem);
    out.seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    return out;
  }

  Pass pass = engine.Run(false);
  if (!pass.ok) {
    out.termination += "; the Jacobian could not be evaluated at the solution";
    out.converged = false;
    out.rss = NAN;
    return out;
  }
  if (options.polish && p > 0) {
    double rss = options.precise_residuals ? engine.Rss() : pass.rss;
    for (int it = 0; it < options.polish_iterations; ++it) {
      Decomposition d = Decompose(pass.R, options.rank_tolerance);
      Eigen::VectorXd y = Eigen::VectorXd::Zero(p);
      const Eigen::VectorXd utz = d.U.transpose() * pass.z;
      for (int i = 0; i < d.rank; ++i) y += d.V.col(i) * (utz(i) / d.s(i));
      const Eigen::VectorXd step = -(d.scale.asDiagonal() * y);
      std::vector<double> old(static_cast<size_t>(p));
      bool clamped = false, moved = false;
      for (int j = 0; j < p; ++j) {
        const auto& fp = out.free_params[static_cast<size_t>(j)];
        old[static_cast<size_t>(j)] = engine.Get(fp);
        const double nv = old[static_cast<size_t>(j)] + step(j);
        if (nv != old[static_cast<size_t>(j)]) moved = true;
        engine.Set(fp, nv);
        if (!engine.Clamp(fp)) clamped = true;
      }
      if (!moved) break;
      const double new_rss = engine.Rss();
      if (!(new_rss <= rss) || clamped) {
        for (int j = 0; j < p; ++j) engine.Set(out.free_params[static_cast<size_t>(j)], old[static_cast<size_t>(j)]);
        break;
      }
      ++out.polish_steps;
      const bool tiny = rss - new_rss <= 1e-15 * rss;
      rss = new_rss;
      pass = engine.Run(false);
      if (!pass.ok) break;
      if (tiny) break;
    }
    if (!pass.ok) {
      pass = engine.Run(false);
      if (!pass.ok) {
        out.termination += "; the Jacobian could not be evaluated at the solution";
        out.converged = false;
        return out;
      }
    }
  }
  if (options.num_perturbations > 0) {
    pass = engine.Run(true);
    if (!pass.ok) {
      out.termination += "; the Jacobian could not be evaluated at the solution";
      out.converged = false;
      return out;
    }
  }
  out.iterations += out.polish_steps;
  out.rss = options.precise_residuals ? engine.Rss() : pass.rss;

  // Covariance (JᵀJ)⁺ from the SVD of the scaled triangular factor.
  Decomposition d = Decompose(pass.R, options.rank_tolerance);
  out.rank = d.rank;
  out.singular_values = d.s;
  out.condition = d.rank > 0 ? d.s(0) / d.s(d.rank - 1) : INFINITY;
  Eigen::MatrixXd cs = Eigen::MatrixXd::Zero(p, p);
  for (int i = 0; i < d.rank; ++i) cs += d.V.col(i) * d.V.col(i).transpose() / (d.s(i) * d.s(i));
  out.cov_unscaled = d.scale.asDiagonal() * cs * d.scale.asDiagonal();
  out.identifiable.assign(static_cast<size_t>(p), true);
  for (int j = 0; j < p; ++j) {
    double null_weight = 0;
    for (int i = d.rank; i < p; ++i) null_weight += d.V(j, i) * d.V(j, i);
    if (pass.R.col(j).norm() == 0 || null_weight > 1e-6) {
      out.identifiable[static_cast<size_t>(j)] = false;
    }
  }
  if (options.num_perturbations > 0) {
    // Δθ = −(JᵀJ)⁺ Jᵀ Δr
    out.sensitivities = -(out.cov_unscaled * pass.G);
  }
  out.seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return out;
}

}  // namespace rb::fit::lsq
