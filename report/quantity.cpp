#include "report/quantity.h"

#include <cmath>
#include <cstdio>

#include "model/units.h"

namespace rb::report {
namespace {

double Identity(double v) { return v; }
double Percent(double fraction) { return fraction * 100.0; }  // a ratio, not a unit change
double Milli(double si) {  // SI → milli- via the unit table (mA, mV, ms share the scale)
  return si / units::FindUnit(units::Quantity::kTime, "ms")->scale;
}
double KtMilli(double kt) { return units::NmPerAToMilliNmPerA(kt); }
double Kv(double ke) { return ke > 0 ? units::KeToKvRpmPerVolt(ke) : NAN; }

std::string Fixed(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", std::max(0, decimals), v);
  std::string s(buf);
  if (s == "-0" || (s.rfind("-0.", 0) == 0 && s.find_first_not_of("-0.") == std::string::npos)) {
    s.erase(0, 1);  // never "-0.00"
  }
  return s;
}

}  // namespace

DisplayUnit SpeedUnit() { return {"rpm", units::RadPerSecToRpm}; }
DisplayUnit CurrentUnit() { return {"A", Identity}; }
DisplayUnit VoltageUnit() { return {"V", Identity}; }
DisplayUnit TorqueUnit() { return {"mN·m", units::NmToMilliNm}; }
DisplayUnit PowerUnit() { return {"W", Identity}; }
DisplayUnit EfficiencyUnit() { return {"%", Percent}; }
DisplayUnit ResistanceUnit() { return {"Ω", Identity}; }
DisplayUnit KvUnit() { return {"rpm/V", Kv}; }
DisplayUnit KtUnit() { return {"mN·m/A", KtMilli}; }
DisplayUnit InertiaUnit() { return {"g·cm²", units::KgM2ToGCm2}; }
DisplayUnit ViscousUnit() { return {"mN·m/krpm", units::ViscousToMilliNmPerKrpm}; }
DisplayUnit InductanceUnit() { return {"mH", units::HenryToMilliHenry}; }
DisplayUnit TimeMsUnit() { return {"ms", Milli}; }
DisplayUnit MotorConstantUnit() { return {"mN·m/√W", units::NmToMilliNm}; }

Shown ToDisplay(const DisplayUnit& unit, double si_value, double si_u) {
  Shown s;
  s.value = unit.from_si(si_value);
  // Central difference of the conversion: exact for linear units, first order for Kv.
  const double h = 1e-6 * std::max(std::fabs(si_value), 1e-300);
  const double slope = (unit.from_si(si_value + h) - unit.from_si(si_value - h)) / (2 * h);
  s.u = std::fabs(slope) * si_u;
  return s;
}

std::string FormatValue(double value, int digits) {
  if (!std::isfinite(value)) return "–";
  if (value == 0) return "0";
  const double mag = std::fabs(value);
  if (mag >= 1e7 || mag < 1e-4) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*e", std::max(0, digits - 1), value);
    return buf;
  }
  const int e = static_cast<int>(std::floor(std::log10(mag)));
  // Round first: 9.9996 with 4 digits becomes 10.00, which needs one decimal fewer.
  int decimals = digits - 1 - e;
  const double rounded = std::round(value * std::pow(10.0, decimals)) / std::pow(10.0, decimals);
  if (std::floor(std::log10(std::fabs(rounded))) > e) --decimals;
  if (decimals < 0) {  // 1234567 with 4 digits: 1235000
    const double step = std::pow(10.0, -decimals);
    return Fixed(std::round(value / step) * step, 0);
  }
  return Fixed(value, decimals);
}

std::string FormatWithU(double value, double u, int digits) {
  if (!std::isfinite(value)) return "–";
  if (!(u > 0) || !std::isfinite(u)) return FormatValue(value, digits);
  // u to two significant digits; recompute the exponent after rounding (0.0999 → 0.10).
  int eu = static_cast<int>(std::floor(std::log10(u)));
  double ur = std::round(u / std::pow(10.0, eu - 1)) * std::pow(10.0, eu - 1);
  eu = static_cast<int>(std::floor(std::log10(ur)));
  const int decimals = 1 - eu;  // position of u's second significant digit
  const double big = std::max(std::fabs(value), ur);
  if (big >= 1e7 || big < 1e-4) {
    const int e = static_cast<int>(std::floor(std::log10(big)));
    const double scale = std::pow(10.0, e);
    return "(" + Fixed(value / scale, decimals + e) + " ± " + Fixed(ur / scale, decimals + e) +
           ")e" + std::to_string(e);
  }
  if (decimals >= 0) return Fixed(value, decimals) + " ± " + Fixed(ur, decimals);
  // u ≥ 100: round the value to u's second digit (e.g. 15 300 ± 1 200).
  const double step = std::pow(10.0, -decimals);
  return Fixed(std::round(value / step) * step, 0) + " ± " + Fixed(ur, 0);
}

std::string FormatSetting(double value, int digits) {
  if (!std::isfinite(value)) return "–";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", std::max(1, digits), value);
  return buf;
}

std::string FormatRelative(double value, double u) {
  if (!std::isfinite(value) || value == 0 || !std::isfinite(u) || !(u > 0)) return "–";
  const double r = 100.0 * u / std::fabs(value);
  return FormatValue(r, 2) + " %";
}

}  // namespace rb::report
