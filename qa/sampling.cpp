// Operating characteristics and the search for the smallest single sampling plan.
#include "qa/sampling.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

namespace rb::qa {
namespace {

double LogChoose(double a, double b) {
  return std::lgamma(a + 1.0) - std::lgamma(b + 1.0) - std::lgamma(a - b + 1.0);
}

// Hypergeometric P(X ≤ c) for an integer number of defectives.
double HypergeometricInteger(std::int64_t lot, int n, int c, std::int64_t defectives) {
  const std::int64_t good = lot - defectives;
  const std::int64_t lo = std::max<std::int64_t>(0, n - good);
  const std::int64_t hi = std::min<std::int64_t>({c, defectives, n});
  if (lo > hi) return lo > c ? 0.0 : 1.0;
  const double log_total = LogChoose(static_cast<double>(lot), n);
  double sum = 0;
  for (std::int64_t d = lo; d <= hi; ++d) {
    sum += std::exp(LogChoose(static_cast<double>(defectives), static_cast<double>(d)) +
                    LogChoose(static_cast<double>(good), static_cast<double>(n - d)) - log_total);
  }
  return std::clamp(sum, 0.0, 1.0);
}

double Acceptance(OcModel model, std::int64_t lot, int n, int c, double p) {
  return model == OcModel::kBinomial ? BinomialAcceptance(n, c, p)
                                     : HypergeometricAcceptance(lot, n, c, p * lot);
}

// Beyond this acceptance number the search stops (its cost grows as c²): such a plan means
// AQL and LTPD are too close to tell apart by sampling.
constexpr int kMaxAcceptance = 2000;

// The smallest n ≤ max_n whose plan (n, c) meets both risks under `model`; n = 0 if none,
// n = -1 if the search passed kMaxAcceptance.
// For a fixed c, Pa(p) falls as n grows, so the consumer's condition holds from some
// n_L(c) on and the producer's up to some n_U(c); n_L grows with c. The first c with
// Pa(AQL; n_L(c), c) ≥ 1 − α therefore gives the smallest feasible n.
std::pair<int, int> Search(OcModel model, const PlanOptions& o, int max_n) {
  int prev = 1;
  for (int c = 0; c < max_n; ++c) {
    if (c > kMaxAcceptance) return {-1, c};
    auto consumer_ok = [&](int n) { return Acceptance(model, o.lot, n, c, o.ltpd) <= o.beta; };
    if (!consumer_ok(max_n)) return {0, 0};      // no n works for this c, nor for larger c
    int lo = std::max(c + 1, prev), hi = max_n;  // smallest n in [lo, hi] with consumer_ok
    while (lo < hi) {
      const int mid = lo + (hi - lo) / 2;
      if (consumer_ok(mid)) {
        hi = mid;
      } else {
        lo = mid + 1;
      }
    }
    if (Acceptance(model, o.lot, lo, c, o.aql) >= 1.0 - o.alpha) return {lo, c};
    prev = lo;
  }
  return {0, 0};
}

}  // namespace

double BinomialAcceptance(int n, int c, double p) {
  if (c < 0) return 0.0;
  if (c >= n || p <= 0.0) return 1.0;
  if (p >= 1.0) return 0.0;
  const double lp = std::log(p), lq = std::log1p(-p);
  double sum = 0;
  for (int d = 0; d <= c; ++d) {
    sum += std::exp(LogChoose(n, d) + d * lp + (n - d) * lq);
  }
  return std::clamp(sum, 0.0, 1.0);
}

double HypergeometricAcceptance(std::int64_t lot, int n, int c, double defectives) {
  if (c < 0) return 0.0;
  defectives = std::clamp(defectives, 0.0, static_cast<double>(lot));
  const double whole = std::floor(defectives);
  const double frac = defectives - whole;
  const auto d0 = static_cast<std::int64_t>(whole);
  const double pa0 = HypergeometricInteger(lot, n, c, d0);
  if (frac == 0.0) return pa0;
  return (1.0 - frac) * pa0 + frac * HypergeometricInteger(lot, n, c, d0 + 1);
}

const char* OcModelName(OcModel m) {
  return m == OcModel::kBinomial ? "binomial" : "hypergeometric";
}

Status Validate(const PlanOptions& o) {
  if (o.lot < 2 || o.lot > 1'000'000'000) {
    return Status::InvalidArgument(
        fmt::format("--lot {}: expected a lot size from 2 to 1e9 units", o.lot));
  }
  if (!(o.aql > 0.0 && o.aql < 1.0)) {
    return Status::InvalidArgument(fmt::format(
        "--aql {:g}: expected a percent defective above 0 and below 100", o.aql * 100.0));
  }
  if (!(o.ltpd > o.aql && o.ltpd <= 1.0)) {
    return Status::InvalidArgument(
        fmt::format("--ltpd {:g}: expected a percent defective above --aql ({:g}) and at most 100",
                    o.ltpd * 100.0, o.aql * 100.0));
  }
  if (!(o.alpha > 0.0 && o.alpha < 1.0)) {
    return Status::InvalidArgument(
        fmt::format("--alpha {:g}: expected a probability between 0 and 1", o.alpha));
  }
  if (!(o.beta > 0.0 && o.beta < 1.0)) {
    return Status::InvalidArgument(
        fmt::format("--beta {:g}: expected a probability between 0 and 1", o.beta));
  }
  if (!(o.alpha + o.beta < 1.0)) {
    return Status::InvalidArgument(fmt::format(
        "--alpha {:g} with --beta {:g}: expected alpha + beta below 1", o.alpha, o.beta));
  }
  return Status::Ok();
}

double SamplingPlan::Acceptance(double p) const {
  return qa::Acceptance(model, options.lot, n, c, p);
}

Result<SamplingPlan> FindPlan(const PlanOptions& o) {
  RB_RETURN_IF_ERROR(Validate(o));
  const int max_n = static_cast<int>(std::min<std::int64_t>(o.lot, 1'000'000'000));
  SamplingPlan plan;
  plan.options = o;
  auto [n, c] = Search(OcModel::kBinomial, o, max_n);
  plan.model = OcModel::kBinomial;
  if (n == 0 || n > o.small_lot_fraction * static_cast<double>(o.lot)) {
    std::tie(n, c) = Search(OcModel::kHypergeometric, o, max_n);
    plan.model = OcModel::kHypergeometric;
  }
  if (n < 0) {
    return Status::FailedPrecondition(fmt::format(
        "AQL {:g} % and LTPD {:g} % are too close: a plan would need to accept more than {} "
        "defectives; widen the gap between them or inspect every unit",
        o.aql * 100.0, o.ltpd * 100.0, kMaxAcceptance));
  }
  if (n == 0) {
    return Status::FailedPrecondition(fmt::format(
        "no single sampling plan of at most {} units meets both risks (AQL {:g} %, LTPD {:g} %, "
        "alpha {:g}, beta {:g}); the limits are too close for this lot: inspect every unit",
        o.lot, o.aql * 100.0, o.ltpd * 100.0, o.alpha, o.beta));
  }
  plan.n = n;
  plan.c = c;
  plan.pa_aql = plan.Acceptance(o.aql);
  plan.pa_ltpd = plan.Acceptance(o.ltpd);
  const int points = std::max(o.oc_points, 2);
  const double p_max = std::min(1.0, 2.0 * o.ltpd);
  for (int i = 0; i < points; ++i) {
    const double p = p_max * i / (points - 1);
    plan.oc.push_back({p, plan.Acceptance(p)});
  }
  return plan;
}

}  // namespace rb::qa
