#include "report/ticks.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace rb::report {

double NiceNumber(double x, bool round) {
  if (!(x > 0) || !std::isfinite(x)) return 1.0;
  const double e = std::floor(std::log10(x));
  const double f = x / std::pow(10.0, e);  // 1 ≤ f < 10
  double nf;
  if (round) {
    nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  } else {
    nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  }
  return nf * std::pow(10.0, e);
}

AxisTicks NiceTicks(double lo, double hi, int target) {
  target = std::max(2, target);
  if (!std::isfinite(lo) && !std::isfinite(hi)) lo = 0, hi = 1;
  if (!std::isfinite(lo)) lo = hi;
  if (!std::isfinite(hi)) hi = lo;
  if (lo > hi) std::swap(lo, hi);
  lo = std::max(lo, -1e300);  // keeps hi − lo finite
  hi = std::min(hi, 1e300);
  const double mag = std::max(std::fabs(lo), std::fabs(hi));
  if (hi - lo <= 1e-12 * mag || hi == lo) {
    // One value (or a span lost in rounding): a range of ±10 % around it, or ±1 around 0.
    const double half = mag > 0 ? 0.1 * mag : 1.0;
    lo -= half;
    hi += half;
  }
  AxisTicks t;
  const double range = NiceNumber(hi - lo, false);
  t.step = NiceNumber(range / (target - 1), true);
  // Whole multiples of the step around the data (integers k, so that values do not drift);
  // the 1e-9 slack keeps a bound that sits on a tick, up to rounding, from adding another.
  const double klo = std::floor(lo / t.step + 1e-9);
  const double khi = std::ceil(hi / t.step - 1e-9);
  t.lo = klo * t.step;
  t.hi = khi * t.step;
  for (double k = klo; k <= khi + 0.5; k += 1) {
    double v = k * t.step;
    if (std::fabs(v) < 1e-9 * t.step) v = 0;
    t.values.push_back(v);
  }
  const double big = std::max(std::fabs(t.lo), std::fabs(t.hi));
  t.scientific = big >= 1e7 || t.step < 1e-5;
  t.decimals = std::max(0, -static_cast<int>(std::floor(std::log10(t.step) + 1e-9)));
  return t;
}

AxisTicks PlotTicks(double lo, double hi, int target, double max_widen) {
  AxisTicks t = NiceTicks(lo, hi, target);
  if (!std::isfinite(lo) || !std::isfinite(hi) || lo == hi) return t;
  if (lo > hi) std::swap(lo, hi);
  const double span = hi - lo;
  if (span <= 1e-12 * std::max(std::fabs(lo), std::fabs(hi))) return t;
  const double pad = 0.03 * span;
  bool trimmed = false;
  if (lo - t.lo > max_widen * span) {
    t.lo = lo - pad;
    trimmed = true;
  }
  if (t.hi - hi > max_widen * span) {
    t.hi = hi + pad;
    trimmed = true;
  }
  if (trimmed) {
    std::erase_if(t.values,
                  [&](double v) { return v < t.lo - 1e-9 * t.step || v > t.hi + 1e-9 * t.step; });
  }
  return t;
}

std::string TickLabel(double v, const AxisTicks& t) {
  if (std::fabs(v) < 1e-9 * t.step) v = 0;  // never "-0"
  char buf[64];
  if (t.scientific && v != 0) {
    // Enough mantissa digits that neighbours differ: step relative to the value's magnitude.
    const int e_v = static_cast<int>(std::floor(std::log10(std::fabs(v))));
    const int e_s = static_cast<int>(std::floor(std::log10(t.step) + 1e-9));
    const int digits = std::clamp(e_v - e_s, 0, 15);
    std::snprintf(buf, sizeof buf, "%.*e", digits, v);
    // Trim "e-09" to "e-9" and "e+07" to "e7".
    std::string s(buf);
    const size_t epos = s.find('e');
    std::string mant = s.substr(0, epos), ex = s.substr(epos + 1);
    const bool neg = ex[0] == '-';
    ex = ex.substr(1);
    while (ex.size() > 1 && ex[0] == '0') ex.erase(0, 1);
    return mant + "e" + (neg ? "-" : "") + ex;
  }
  std::snprintf(buf, sizeof buf, "%.*f", t.decimals, v);
  return buf;
}

}  // namespace rb::report
