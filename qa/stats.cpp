// Distributions, descriptive statistics, Cpk with its interval, generalized ESD.
#include "qa/stats.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

namespace rb::qa {
namespace {

// Continued fraction for the incomplete beta function (DLMF 8.17.22), evaluated by the
// modified Lentz method; converges fast for x < (a + 1)/(a + b + 2).
double BetaContinuedFraction(double a, double b, double x) {
  constexpr int kMaxIter = 2000;
  constexpr double kEps = 1e-16;
  constexpr double kTiny = 1e-300;
  const double qab = a + b, qap = a + 1, qam = a - 1;
  double c = 1.0;
  double d = 1.0 - qab * x / qap;
  if (std::fabs(d) < kTiny) d = kTiny;
  d = 1.0 / d;
  double h = d;
  for (int m = 1; m <= kMaxIter; ++m) {
    const double m2 = 2.0 * m;
    // Even step.
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
    d = 1.0 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    h *= d * c;
    // Odd step.
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1.0 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    const double del = d * c;
    h *= del;
    if (std::fabs(del - 1.0) < kEps) break;
  }
  return h;
}

// P(T > t) for t ≥ 0.
double StudentTUpperTail(double t, double nu) {
  return 0.5 * IncompleteBeta(nu / 2.0, 0.5, nu / (nu + t * t));
}

}  // namespace

double NormalCdf(double z) { return 0.5 * std::erfc(-z / std::numbers::sqrt2); }

double NormalQuantile(double p) {
  if (!(p > 0.0 && p < 1.0)) return std::numeric_limits<double>::quiet_NaN();
  double lo = -40.0, hi = 40.0;
  for (int i = 0; i < 200 && hi - lo > 1e-15 * std::max(1.0, std::fabs(lo)); ++i) {
    const double mid = 0.5 * (lo + hi);
    (NormalCdf(mid) < p ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

double IncompleteBeta(double a, double b, double x) {
  if (x <= 0.0) return 0.0;
  if (x >= 1.0) return 1.0;
  const double log_front =
      std::lgamma(a + b) - std::lgamma(a) - std::lgamma(b) + a * std::log(x) + b * std::log1p(-x);
  const double front = std::exp(log_front);
  if (x < (a + 1.0) / (a + b + 2.0)) return front * BetaContinuedFraction(a, b, x) / a;
  return 1.0 - front * BetaContinuedFraction(b, a, 1.0 - x) / b;
}

double StudentTCdf(double t, double nu) {
  const double upper = StudentTUpperTail(std::fabs(t), nu);
  return t >= 0 ? 1.0 - upper : upper;
}

double StudentTUpper(double q, double nu) {
  if (!(q > 0.0 && q < 1.0) || !(nu > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  if (q == 0.5) return 0.0;
  if (q > 0.5) return -StudentTUpper(1.0 - q, nu);
  // The tail falls monotonically from 1/2 at t = 0; bracket, then bisect.
  double lo = 0.0, hi = 1.0;
  while (StudentTUpperTail(hi, nu) > q && hi < 1e300) {
    lo = hi;
    hi *= 2.0;
  }
  for (int i = 0; i < 400 && hi - lo > 1e-15 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    (StudentTUpperTail(mid, nu) > q ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

Describe DescribeSample(std::span<const double> x) {
  Describe d;
  d.n = static_cast<int>(x.size());
  if (x.empty()) return d;
  double sum = 0;
  d.min = d.max = x[0];
  for (double v : x) {
    sum += v;
    d.min = std::min(d.min, v);
    d.max = std::max(d.max, v);
  }
  d.mean = sum / d.n;
  if (d.n > 1) {
    double ss = 0;
    for (double v : x) ss += (v - d.mean) * (v - d.mean);
    d.sd = std::sqrt(ss / (d.n - 1));
    // Equal values leave rounding dust (~1e-17 relative) in the mean: that is no spread.
    if (d.sd <= 1e-12 * std::fabs(d.mean)) d.sd = 0;
  }
  return d;
}

Capability ComputeCpk(const Describe& d, std::optional<double> lower_limit,
                      std::optional<double> upper_limit, double confidence, int small_n) {
  Capability c;
  c.confidence = confidence;
  if (!lower_limit && !upper_limit) {
    c.note = "no specification limit";
    return c;
  }
  if (d.n < 2) {
    c.note = "needs at least 2 motors";
    return c;
  }
  // Spread at rounding level (identical values give ~1e-17 relative) counts as none.
  if (!(d.sd > 1e-12 * std::fabs(d.mean))) {
    c.note = "all values equal; no spread to compare with the tolerance";
    return c;
  }
  double cpk = std::numeric_limits<double>::infinity();
  if (upper_limit) cpk = std::min(cpk, (*upper_limit - d.mean) / (3.0 * d.sd));
  if (lower_limit) cpk = std::min(cpk, (d.mean - *lower_limit) / (3.0 * d.sd));
  c.available = true;
  c.cpk = cpk;
  c.se = std::sqrt(1.0 / (9.0 * d.n) + cpk * cpk / (2.0 * (d.n - 1)));
  const double z = NormalQuantile(1.0 - (1.0 - confidence) / 2.0);
  c.lower = cpk - z * c.se;
  c.upper = cpk + z * c.se;
  if (d.n < small_n) {
    c.small_sample = true;
    c.note =
        fmt::format("small sample (n = {} < {}): Cpk is a rough guide; see its {:g} % interval",
                    d.n, small_n, confidence * 100.0);
  }
  return c;
}

double GrubbsCritical(int n, double alpha) {
  if (n < 3) return std::numeric_limits<double>::quiet_NaN();
  const double t = StudentTUpper(alpha / (2.0 * n), n - 2.0);
  return (n - 1.0) / std::sqrt(static_cast<double>(n)) * std::sqrt(t * t / (n - 2.0 + t * t));
}

OutlierResult GeneralizedEsd(std::span<const double> x, int max_outliers, double alpha, int min_n) {
  OutlierResult r;
  const int n = static_cast<int>(x.size());
  if (n < std::max(min_n, 3)) {
    r.note =
        fmt::format("{} values: too few for an outlier test (needs {})", n, std::max(min_n, 3));
    return r;
  }
  max_outliers = std::clamp(max_outliers, 1, n - 3);
  r.tested = true;
  std::vector<bool> removed(static_cast<size_t>(n), false);
  for (int i = 1; i <= max_outliers; ++i) {
    const int left = n - i + 1;
    double sum = 0;
    for (int k = 0; k < n; ++k) {
      if (!removed[static_cast<size_t>(k)]) sum += x[static_cast<size_t>(k)];
    }
    const double mean = sum / left;
    double ss = 0;
    int far = -1;
    double far_dev = -1;
    for (int k = 0; k < n; ++k) {
      if (removed[static_cast<size_t>(k)]) continue;
      const double dev = std::fabs(x[static_cast<size_t>(k)] - mean);
      ss += dev * dev;
      if (dev > far_dev) {
        far_dev = dev;
        far = k;
      }
    }
    const double sd = std::sqrt(ss / (left - 1));
    if (!(sd > 1e-12 * std::fabs(mean))) break;  // the rest are all equal: none stands out
    const double t = StudentTUpper(alpha / (2.0 * left), n - i - 1.0);
    EsdStep step;
    step.index = far;
    step.statistic = far_dev / sd;
    step.critical = (n - i) * t / std::sqrt((n - i - 1.0 + t * t) * (n - i + 1.0));
    r.steps.push_back(step);
    removed[static_cast<size_t>(far)] = true;
  }
  for (int i = 0; i < static_cast<int>(r.steps.size()); ++i) {
    if (r.steps[static_cast<size_t>(i)].statistic > r.steps[static_cast<size_t>(i)].critical) {
      r.outliers = i + 1;
    }
  }
  for (int i = 0; i < r.outliers; ++i) r.indices.push_back(r.steps[static_cast<size_t>(i)].index);
  return r;
}

}  // namespace rb::qa
