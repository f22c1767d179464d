// Commutator geometry: brush-to-brush resistance of a ring winding and ripple counts.
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <set>

#include "model/commutator.h"

using namespace rb::model;

TEST_CASE("3-slot delta armature: 2/3·Rc on single segments, 1/2·Rc when bridged "
          "(circuit derivation, domain.md §3.3)") {
  std::set<double> seen;
  int bridged = 0;
  const int n = 36000;
  const double beta = 0.2;
  for (int k = 0; k < n; ++k) {
    const double f = BrushResistanceFactor(3, beta, (k + 0.5) * 2 * std::numbers::pi / n);
    seen.insert(std::round(f * 1e12) / 1e12);
    if (std::fabs(f - 0.5) < 1e-12) ++bridged;
  }
  REQUIRE(seen.size() == 2);
  CHECK(*seen.begin() == doctest::Approx(0.5));
  CHECK(*seen.rbegin() == doctest::Approx(2.0 / 3.0));
  // Each of the two brushes bridges for beta of every segment pitch; for odd K they never
  // bridge together, so the 1/2 reading holds for 2·beta of a revolution.
  CHECK(static_cast<double>(bridged) / n == doctest::Approx(2 * beta).epsilon(1e-3));
  CHECK(MeanBrushResistanceFactor(3, beta) ==
        doctest::Approx((1 - 2 * beta) * 2.0 / 3.0 + 2 * beta * 0.5).epsilon(1e-3));
}

TEST_CASE("knife-edge brushes on a 3-segment ring always read 2/3·Rc") {
  CHECK(BrushResistanceFactor(3, 0.0, 0.3) == doctest::Approx(2.0 / 3.0));
}

TEST_CASE("ripples per revolution: K even → K, K odd → 2K (domain.md §4)") {
  CHECK(RipplesPerRevolution(3) == 6);
  CHECK(RipplesPerRevolution(5) == 10);
  CHECK(RipplesPerRevolution(7) == 14);
  CHECK(RipplesPerRevolution(12) == 12);
}

TEST_CASE("the resistance pattern changes 2K times per revolution for odd K") {
  for (int k : {3, 5, 7}) {
    const int n = 72000;
    int changes = 0;
    double prev = BrushResistanceFactor(k, 0.2, 0.0);
    for (int s = 1; s <= n; ++s) {
      const double f = BrushResistanceFactor(k, 0.2, s * 2 * std::numbers::pi / n);
      if (std::fabs(f - prev) > 1e-12) ++changes;
      prev = f;
    }
    // Each ripple is one bridge-on and one bridge-off change.
    CHECK(changes == 2 * RipplesPerRevolution(k));
  }
}
