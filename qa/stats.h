// rotorbench qa: the statistics behind batch acceptance — distributions, capability (Cpk)
// with a confidence interval, and an outlier test. Unit-free: callers pass SI values.
//
// Distributions are computed here (regularised incomplete beta by continued fraction,
// quantiles by bisection), not read from tables. Pure functions; thread-safe.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <vector>

namespace rb::qa {

// ---- Distributions
/// Standard normal CDF Φ(z).
double NormalCdf(double z);
/// Standard normal quantile: the z with Φ(z) = p, 0 < p < 1.
double NormalQuantile(double p);
/// Regularised incomplete beta function I_x(a, b), a, b > 0, 0 ≤ x ≤ 1.
double IncompleteBeta(double a, double b, double x);
/// Student t CDF with `nu` > 0 degrees of freedom.
double StudentTCdf(double t, double nu);
/// Upper critical value of Student t: the t with P(T > t) = q, 0 < q < 1.
double StudentTUpper(double q, double nu);

// ---- Descriptive statistics
struct Describe {
  int n = 0;
  double mean = 0, sd = 0, min = 0, max = 0;  ///< sd: sample standard deviation (n − 1)
};
Describe DescribeSample(std::span<const double> x);

// ---- Process capability
/// Cpk from a sample against one or two specification limits, with Bissell's (1990)
/// normal-theory confidence interval: SE(Ĉpk) ≈ √(1/(9n) + Ĉpk²/(2(n − 1))).
/// With one limit the index is the one-sided Cpu or Cpl.
struct Capability {
  bool available = false;  ///< false when n < 2, sd = 0 or no limit
  double cpk = 0;
  double se = 0;     ///< approximate standard error of Ĉpk
  double lower = 0;  ///< two-sided confidence interval at `confidence`
  double upper = 0;
  double confidence = 0.95;
  bool small_sample = false;  ///< n below the caution threshold
  std::string note;           ///< why unavailable, or the small-sample caution
};
/// `small_n`: below this many values the note carries a small-sample caution.
Capability ComputeCpk(const Describe& d, std::optional<double> lower_limit,
                      std::optional<double> upper_limit, double confidence = 0.95,
                      int small_n = 30);

// ---- Outliers
/// Grubbs' critical value for the two-sided test of one outlier in n normal values at
/// significance alpha: G = ((n − 1)/√n)·√(t²/(n − 2 + t²)), t = t_{α/(2n), n−2}
/// (NIST/SEMATECH e-Handbook §1.3.5.17.1). n ≥ 3.
double GrubbsCritical(int n, double alpha);

/// Rosner's (1983) generalized ESD test: up to `max_outliers` outliers, each step a Grubbs
/// statistic R_i on the values left, compared with
/// λ_i = (n − i)·t / √((n − i − 1 + t²)(n − i + 1)), t = t_{α/(2(n − i + 1)), n − i − 1}
/// (NIST/SEMATECH e-Handbook §1.3.5.17.3). With max_outliers = 1 it is Grubbs' test.
struct EsdStep {
  int index = -1;        ///< position in the input of the value removed at this step
  double statistic = 0;  ///< R_i
  double critical = 0;   ///< λ_i
};
struct OutlierResult {
  bool tested = false;  ///< false when n is too small (see note)
  std::vector<EsdStep> steps;
  int outliers = 0;          ///< the largest i with R_i > λ_i (0 = none)
  std::vector<int> indices;  ///< input positions of the outliers
  std::string note;
};
/// The test needs n ≥ `min_n` (default 7; common guidance that Grubbs' test tags most
/// points as outliers in samples of six or fewer — no primary source checked) and
/// n − max_outliers ≥ 3.
OutlierResult GeneralizedEsd(std::span<const double> x, int max_outliers, double alpha = 0.05,
                             int min_n = 7);

}  // namespace rb::qa
