// Axis ticks: the "nice numbers" rule (steps of 1, 2 or 5 × 10^n; Heckbert, "Nice numbers
// for graph labels", Graphics Gems, 1990 — from memory) checked as properties on ordinary
// and awkward ranges: tiny, huge, negative, one point, zero span, reversed, NaN.
#include "report/ticks.h"

#include <doctest/doctest.h>

#include <cmath>
#include <random>
#include <set>
#include <vector>

using rb::report::AxisTicks;
using rb::report::NiceNumber;
using rb::report::NiceTicks;
using rb::report::PlotTicks;
using rb::report::TickLabel;

namespace {

/// The step is 1, 2 or 5 times a power of ten.
bool IsNiceStep(double step) {
  const double e = std::floor(std::log10(step) + 1e-9);
  const double m = step / std::pow(10.0, e);
  return std::fabs(m - 1) < 1e-9 || std::fabs(m - 2) < 1e-9 || std::fabs(m - 5) < 1e-9;
}

/// Every property a reader relies on, for data in [lo, hi].
void CheckTicks(const AxisTicks& t, double lo, double hi, int target) {
  CAPTURE(lo);
  CAPTURE(hi);
  REQUIRE(t.values.size() >= 2);
  CHECK(t.values.size() <= static_cast<size_t>(2 * target + 2));
  CHECK(IsNiceStep(t.step));
  CHECK(t.lo <= std::min(lo, hi) + 1e-9 * t.step);
  CHECK(t.hi >= std::max(lo, hi) - 1e-9 * t.step);
  std::set<std::string> labels;
  for (size_t k = 0; k < t.values.size(); ++k) {
    // Whole multiples of the step, evenly spaced, inside the axis.
    CHECK(std::fabs(t.values[k] / t.step - std::round(t.values[k] / t.step)) < 1e-6);
    if (k > 0) CHECK(t.values[k] - t.values[k - 1] == doctest::Approx(t.step));
    CHECK(t.values[k] >= t.lo - 1e-9 * t.step);
    CHECK(t.values[k] <= t.hi + 1e-9 * t.step);
    const std::string label = TickLabel(t.values[k], t);
    CHECK(label != "-0");
    if (label[0] == '-') CHECK(std::stod(label) != 0);  // no negative zero in any precision
    labels.insert(label);
    // The label reads back as the tick value.
    CHECK(std::stod(label) == doctest::Approx(t.values[k]).epsilon(1e-9).scale(t.step));
  }
  CHECK(labels.size() == t.values.size());  // neighbours are told apart
}

}  // namespace

TEST_CASE("nice numbers: the smallest (or nearest) of 1, 2, 5 × 10^n") {
  CHECK(NiceNumber(7350, false) == doctest::Approx(10000));
  CHECK(NiceNumber(1.01, false) == doctest::Approx(2));
  CHECK(NiceNumber(0.0042, false) == doctest::Approx(0.005));
  CHECK(NiceNumber(1470, true) == doctest::Approx(1000));
  CHECK(NiceNumber(3.3, true) == doctest::Approx(5));
  CHECK(NiceNumber(0.0026, true) == doctest::Approx(0.002));
}

TEST_CASE("ticks on ordinary ranges: 0–7350 rpm, 0–1, a current step") {
  AxisTicks t = NiceTicks(0, 7350, 6);
  CheckTicks(t, 0, 7350, 6);
  CHECK(t.lo == 0);
  CHECK(t.step == doctest::Approx(2000));  // 0, 2000, …, 8000
  CHECK(TickLabel(8000, t) == "8000");
  t = NiceTicks(0, 1, 6);
  CheckTicks(t, 0, 1, 6);
  CHECK(t.step == doctest::Approx(0.2));
  CHECK(TickLabel(0.6000000000000001, t) == "0.6");
  CheckTicks(NiceTicks(-0.012, 3.61, 5), -0.012, 3.61, 5);
}

TEST_CASE("ticks on awkward ranges: tiny, huge, negative, one point, zero span, reversed, NaN") {
  CheckTicks(NiceTicks(1e-9, 3e-9, 5), 1e-9, 3e-9, 5);  // nano-scale
  const AxisTicks tiny = NiceTicks(1e-9, 3e-9, 5);
  CHECK(tiny.scientific);
  CHECK(TickLabel(tiny.values[1], tiny).find('e') != std::string::npos);
  CheckTicks(NiceTicks(2.5e8, 9.1e8, 6), 2.5e8, 9.1e8, 6);  // huge
  CheckTicks(NiceTicks(-3.7, -0.2, 6), -3.7, -0.2, 6);      // all negative
  const AxisTicks neg = NiceTicks(-3.7, -0.2, 6);
  CHECK(neg.hi <= 0);
  CheckTicks(NiceTicks(-12, 12, 4), -12, 12, 4);  // symmetric (residuals)
  // A tiny span far from zero: 1000.0001 … 1000.0003.
  CheckTicks(NiceTicks(1000.0001, 1000.0003, 5), 1000.0001, 1000.0003, 5);
  // One point: a range around it, containing it.
  AxisTicks one = NiceTicks(5, 5, 6);
  CheckTicks(one, 5, 5, 6);
  CHECK(one.lo < 5);
  CHECK(one.hi > 5);
  // Zero span at zero: ±1.
  AxisTicks zero = NiceTicks(0, 0, 6);
  CheckTicks(zero, 0, 0, 6);
  CHECK(zero.lo <= -1);
  CHECK(zero.hi >= 1);
  // Reversed input is the same axis.
  AxisTicks rev = NiceTicks(10, -10, 5), fwd = NiceTicks(-10, 10, 5);
  CHECK(rev.values == fwd.values);
  // NaN or infinity: ignored where the other end is usable, else the unit range.
  CheckTicks(NiceTicks(NAN, 4, 5), 4, 4, 5);
  CheckTicks(NiceTicks(NAN, NAN, 5), 0, 1, 5);
  CheckTicks(NiceTicks(-INFINITY, INFINITY, 5), 0, 1, 5);
  // Target 2 (a short residual strip) still gives at least two ticks.
  CheckTicks(NiceTicks(-0.004, 0.004, 2), -0.004, 0.004, 2);
}

TEST_CASE("random ranges over 24 decades keep every tick property (seeded sweep)") {
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> expo(-12, 12), unit(-1, 1);
  std::uniform_int_distribution<int> targets(2, 10);
  for (int k = 0; k < 2000; ++k) {
    const double scale = std::pow(10.0, expo(rng));
    const double a = unit(rng) * scale, b = a + std::fabs(unit(rng)) * scale * 3;
    const int target = targets(rng);
    CheckTicks(NiceTicks(a, b, target), a, b, target);
  }
}

TEST_CASE(
    "plot axes: widened to whole ticks when cheap, else the data ± 3 % with the ticks "
    "inside (a −0.005 A reading does not add a whole empty step below zero)") {
  AxisTicks t = PlotTicks(-0.005, 3.2, 6);  // step 1: −1 and 4 would each waste ≥ 25 %
  CHECK(t.lo == doctest::Approx(-0.005 - 0.03 * 3.205));
  CHECK(t.hi == doctest::Approx(3.2 + 0.03 * 3.205));
  CHECK(t.values == std::vector<double>{0, 1, 2, 3});
  t = PlotTicks(0.1, 9.7, 6);  // 0 and 10 cost ≤ 10 % of the span each: widened
  CHECK(t.lo == 0);
  CHECK(t.hi == doctest::Approx(10));
  t = PlotTicks(0, 7350, 6);
  CHECK(t.lo == 0);
  CHECK(t.hi == doctest::Approx(8000));
}
