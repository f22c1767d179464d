// Sampling plans: OC probabilities against published check values, the plan search
// against an exhaustive search, and the binomial/hypergeometric switch.
#include "qa/sampling.h"

#include <doctest/doctest.h>

#include <cmath>

using namespace rb::qa;

TEST_CASE("binomial OC against domain.md §6.1 check values") {
  // domain.md §6.1 (recomputed there from the binomial sum), 4 decimals: ±0.00005.
  struct Row {
    int n, c;
    double p, pa;
  };
  const Row rows[] = {{80, 2, 0.005, 0.9923}, {80, 2, 0.01, 0.9534}, {80, 2, 0.02, 0.7844},
                      {80, 2, 0.05, 0.2306},  {13, 0, 0.01, 0.8775}, {13, 0, 0.05, 0.5133},
                      {125, 3, 0.01, 0.9626}, {125, 3, 0.05, 0.1238}};
  for (const Row& r : rows) {
    CAPTURE(r.n);
    CAPTURE(r.p);
    CHECK(std::fabs(BinomialAcceptance(r.n, r.c, r.p) - r.pa) <= 0.00005);
  }
}

TEST_CASE("binomial OC closed forms: c = 0 is (1 − p)^n, c ≥ n accepts always") {
  for (int n : {1, 7, 50, 400}) {
    for (double p : {0.001, 0.03, 0.2}) {
      CHECK(BinomialAcceptance(n, 0, p) == doctest::Approx(std::pow(1 - p, n)).epsilon(1e-12));
    }
    CHECK(BinomialAcceptance(n, n, 0.7) == 1.0);
  }
  // c = 1: (1 − p)^n + n·p·(1 − p)^(n − 1).
  CHECK(BinomialAcceptance(20, 1, 0.05) ==
        doctest::Approx(std::pow(0.95, 20) + 20 * 0.05 * std::pow(0.95, 19)).epsilon(1e-12));
}

TEST_CASE("hypergeometric OC by hand: lot 10 with 2 defective, sample 3") {
  // C(8,3)/C(10,3) = 56/120 with no defective drawn; with one, C(2,1)·C(8,2) = 2·28 = 56 more.
  CHECK(HypergeometricAcceptance(10, 3, 0, 2) == doctest::Approx(56.0 / 120.0));
  CHECK(HypergeometricAcceptance(10, 3, 1, 2) == doctest::Approx(112.0 / 120.0));
  CHECK(HypergeometricAcceptance(10, 3, 2, 2) == doctest::Approx(1.0));
  // Whole-lot inspection finds every defective: accept iff D ≤ c.
  CHECK(HypergeometricAcceptance(10, 10, 1, 2) == doctest::Approx(0.0));
  CHECK(HypergeometricAcceptance(10, 10, 2, 2) == doctest::Approx(1.0));
  // Non-integer D interpolates linearly between the neighbouring integers.
  CHECK(HypergeometricAcceptance(10, 3, 0, 1.5) ==
        doctest::Approx(0.5 * (HypergeometricAcceptance(10, 3, 0, 1) + 56.0 / 120.0)));
}

TEST_CASE("hypergeometric tends to binomial for a lot much larger than the sample") {
  // Sampling without replacement from N → ∞ is sampling with replacement (limit theorem).
  for (double p : {0.01, 0.05}) {
    CHECK(HypergeometricAcceptance(2'000'000, 80, 2, p * 2'000'000) ==
          doctest::Approx(BinomialAcceptance(80, 2, p)).epsilon(1e-4));
  }
}

// Exhaustive search over n for the smallest feasible plan under the binomial OC
// (independent of the bisection in FindPlan). For each n, c rises until the producer's
// risk is met; a larger c only raises Pa(LTPD), so that c is the only candidate.
static int SmallestFeasibleN(double aql, double ltpd, double alpha, double beta, int limit) {
  for (int n = 1; n <= limit; ++n) {
    for (int c = 0; c < n; ++c) {
      if (BinomialAcceptance(n, c, aql) < 1 - alpha) continue;
      if (BinomialAcceptance(n, c, ltpd) <= beta) return n;
      break;
    }
  }
  return 0;
}

TEST_CASE("FindPlan gives the smallest plan meeting both risks (checked exhaustively)") {
  struct Case {
    double aql, ltpd, alpha, beta;
  };
  const Case cases[] = {{0.01, 0.05, 0.05, 0.10},  {0.01, 0.06, 0.05, 0.10},
                        {0.005, 0.04, 0.05, 0.10}, {0.02, 0.10, 0.05, 0.05},
                        {0.001, 0.03, 0.10, 0.10}, {0.04, 0.12, 0.05, 0.10}};
  for (const Case& k : cases) {
    CAPTURE(k.aql);
    CAPTURE(k.ltpd);
    PlanOptions o;
    o.lot = 10'000'000;  // large lot: binomial
    o.aql = k.aql;
    o.ltpd = k.ltpd;
    o.alpha = k.alpha;
    o.beta = k.beta;
    const rb::Result<SamplingPlan> plan = FindPlan(o);
    REQUIRE(plan.ok());
    CHECK(plan->model == OcModel::kBinomial);
    CHECK(plan->pa_aql >= 1 - k.alpha);
    CHECK(plan->pa_ltpd <= k.beta);
    CHECK(plan->pa_aql == doctest::Approx(BinomialAcceptance(plan->n, plan->c, k.aql)));
    CHECK(plan->n == SmallestFeasibleN(k.aql, k.ltpd, k.alpha, k.beta, plan->n + 5));
  }
}

TEST_CASE("small lots switch to the hypergeometric OC (sample over 10 % of the lot)") {
  PlanOptions o;
  o.aql = 0.01;
  o.ltpd = 0.05;
  o.lot = 1'000'000;
  const rb::Result<SamplingPlan> big = FindPlan(o);
  REQUIRE(big.ok());
  CHECK(big->model == OcModel::kBinomial);
  o.lot = 1000;  // the binomial plan's n is over 100 = 10 % of 1000
  REQUIRE(big->n > 100);
  const rb::Result<SamplingPlan> small = FindPlan(o);
  REQUIRE(small.ok());
  CHECK(small->model == OcModel::kHypergeometric);
  CHECK(small->pa_aql >= 0.95);
  CHECK(small->pa_ltpd <= 0.10);
  // Sampling without replacement is more informative: never a larger sample.
  CHECK(small->n <= big->n);
  CHECK(small->pa_aql == doctest::Approx(HypergeometricAcceptance(1000, small->n, small->c, 10)));
  // The OC curve is a curve of this plan: Pa(0) = 1, falling, ends near 0.
  REQUIRE(small->oc.size() >= 10);
  CHECK(small->oc.front().pa == doctest::Approx(1.0));
  for (size_t i = 1; i < small->oc.size(); ++i) CHECK(small->oc[i].pa <= small->oc[i - 1].pa);
}

TEST_CASE("plans that cannot exist and bad options are errors naming the option") {
  PlanOptions o;
  o.lot = 10;
  o.aql = 0.01;
  o.ltpd = 0.05;
  const rb::Result<SamplingPlan> none = FindPlan(o);
  REQUIRE_FALSE(none.ok());
  CHECK(none.status().message().find("inspect every unit") != std::string::npos);
  o.lot = 1000;
  o.ltpd = 0.005;
  CHECK(FindPlan(o).status().message().find("--ltpd") == 0);
  o.ltpd = 0.05;
  o.aql = 0;
  CHECK(FindPlan(o).status().message().find("--aql") == 0);
  o.aql = 0.01;
  o.lot = 1;
  CHECK(FindPlan(o).status().message().find("--lot") == 0);
}
