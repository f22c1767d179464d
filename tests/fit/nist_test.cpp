// The least-squares core against the NIST StRD nonlinear regression datasets
// (fixtures/nist/, NIST ITL Statistical Reference Datasets; see fixtures/nist/README.md).
// The same core (fit/least_squares.h: Ceres LM, Gauss–Newton polish, QR/SVD covariance)
// fits the motor. Accuracy is the log relative error LRE = −log10(|x − c|/|c|) against the
// certified values; SD = sqrt(s²·(JᵀJ)⁻¹ᵢᵢ) with s² = RSS/(n − p) (n − p also for Rat43,
// whose file states 9 degrees of freedom where n − p = 11; its certified residual standard
// deviation equals sqrt(RSS/11)).
#include <doctest/doctest.h>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <unordered_map>

#include "fit/fit.h"
#include "fit/least_squares.h"
#include "tests/fit/nist_strd.h"
#include "tests/testutil.h"

using namespace rb::fit;
namespace nist = rb::testing::nist;

namespace {

// Solver messages to stderr, errors only (as the CLI does).
const bool kLogging = (rb::fit::InitLogging("rb_tests"), true);

struct Observation {
  const nist::Dataset* d;
  int k;
  template <typename T>
  bool operator()(const T* b, T* r) const {
    const auto& ds = *d;
    const double x = static_cast<double>(ds.x[static_cast<size_t>(k)]);
    const double x2 = ds.x2.empty() ? 0.0 : static_cast<double>(ds.x2[static_cast<size_t>(k)]);
    const double y = static_cast<double>(ds.y[static_cast<size_t>(k)]);
    const T f = nist::Model<T, double>(ds.name, b, x, x2);
    using std::log;
    r[0] = (ds.name == "Nelson" ? T(std::log(y)) : T(y)) - f;
    using std::isfinite;
    return isfinite(r[0]);  // outside the model's domain: the solver backs off
  }
  // The same residual in long double, from exact decimal data.
  double Precise(const double* b) const {
    const auto& ds = *d;
    long double bl[9];
    for (int i = 0; i < ds.p; ++i) bl[i] = b[i];
    const size_t kk = static_cast<size_t>(k);
    const long double f = nist::Model<long double, long double>(
        ds.name, bl, ds.x[kk], ds.x2.empty() ? 0.0L : ds.x2[kk]);
    const long double y = ds.name == "Nelson" ? std::log(ds.y[kk]) : ds.y[kk];
    return static_cast<double>(y - f);
  }
};

template <int N>
ceres::CostFunction* MakeCost(const Observation& o) {
  return new ceres::AutoDiffCostFunction<Observation, 1, N>(new Observation(o));
}

ceres::CostFunction* MakeCost(int p, const Observation& o) {
  switch (p) {
    case 2: return MakeCost<2>(o);
    case 3: return MakeCost<3>(o);
    case 4: return MakeCost<4>(o);
    case 5: return MakeCost<5>(o);
    case 6: return MakeCost<6>(o);
    case 7: return MakeCost<7>(o);
    case 8: return MakeCost<8>(o);
    case 9: return MakeCost<9>(o);
  }
  return nullptr;
}

double Lre(double x, double c) {
  if (!std::isfinite(x)) return 0;
  if (x == c) return 11;
  return std::clamp(-std::log10(std::fabs(x - c) / std::fabs(c)), 0.0, 11.0);
}

struct Outcome {
  double lre_param = 0, lre_sd = 0, lre_rss = 0;
  std::string termination;
};

Outcome FitOne(const nist::Dataset& d, const std::vector<double>& start) {
  std::vector<double> b = start;
  ceres::Problem problem;
  std::unordered_map<ceres::ResidualBlockId, Observation> obs;
  for (int k = 0; k < d.n; ++k) {
    Observation o{&d, k};
    ceres::ResidualBlockId id = problem.AddResidualBlock(MakeCost(d.p, o), nullptr, b.data());
    obs.emplace(id, o);
  }
  std::vector<lsq::Block> blocks = {{b.data(), d.p, {}, {}, {}}};
  lsq::ConfigureBlocks(&problem, blocks);
  lsq::Options opt;
  opt.max_iterations = 1000;
  opt.function_tolerance = 1e-15;
  opt.parameter_tolerance = 1e-15;
  opt.gradient_tolerance = 1e-20;
  opt.precise_residuals = [&](ceres::ResidualBlockId id, double* r) {
    r[0] = obs.at(id).Precise(b.data());
    return true;
  };
  lsq::Result res = lsq::Solve(&problem, blocks, opt);
  Outcome out;
  out.termination = res.termination;
  const double s2 = res.rss / (d.n - d.p);
  out.lre_param = out.lre_sd = 11;
  for (int i = 0; i < d.p; ++i) {
    out.lre_param = std::min(out.lre_param, Lre(b[static_cast<size_t>(i)], d.certified[static_cast<size_t>(i)]));
    const int fi = res.FreeIndex(0, i);
    const double sd = fi >= 0 ? std::sqrt(s2 * res.cov_unscaled(fi, fi)) : NAN;
    out.lre_sd = std::min(out.lre_sd, Lre(sd, d.certified_sd[static_cast<size_t>(i)]));
  }
  out.lre_rss = Lre(res.rss, d.certified_rss);
  return out;
}

const char* kAll[] = {"Misra1a", "Chwirut2", "Chwirut1", "Lanczos3", "Gauss1",   "Gauss2",
                      "DanWood", "Misra1b",  "Kirby2",   "Hahn1",    "Nelson",   "MGH17",
                      "Lanczos1", "Lanczos2", "Gauss3",  "Misra1c",  "Misra1d",  "Roszman1",
                      "ENSO",    "MGH09",    "Thurber",  "BoxBOD",   "Rat42",    "MGH10",
                      "Eckerle4", "Rat43",   "Bennett5"};

}  // namespace

TEST_CASE("NIST StRD nonlinear regression: certified values from the shared LS core") {
  int lower_average = 0, higher = 0;
  std::string table = "dataset   level    start  LRE(param) LRE(sd) LRE(RSS)  termination\n";
  for (const char* name : kAll) {
    auto d = nist::Read(rb::testing::Fixture(std::string("nist/") + name + ".dat"), name);
    REQUIRE_MESSAGE(d.has_value(), name);
    REQUIRE(d->n > d->p);
    bool reproduced = false;
    for (int s = 1; s <= 2; ++s) {
      const Outcome o = FitOne(*d, s == 1 ? d->start1 : d->start2);
      table += fmt::format("{:<9} {:<8} {:>5} {:>10.1f} {:>7.1f} {:>8.1f}  {}\n", name, d->level, s,
                           o.lre_param, o.lre_sd, o.lre_rss, o.termination);
      // Thresholds from the issue: parameters to ≥ 6 significant digits, SDs to ≥ 4.
      if (o.lre_param >= 6 && o.lre_sd >= 4) reproduced = true;
      // Never a confident wrong answer: reaching the certified RSS (≥ 8 digits) means the
      // certified parameters were found (MGH09's local minimum has a different RSS).
      if (o.lre_rss >= 8) {
        CHECK_MESSAGE(o.lre_param >= 4, name, " start ", s);
      }
    }
    if (d->level == "Higher") {
      ++higher;
    } else {
      ++lower_average;
      CHECK_MESSAGE(reproduced, name, ": certified values not reproduced from either start");
    }
  }
  MESSAGE("\n" << table);
  CHECK(lower_average == 19);
  CHECK(higher == 8);
}
