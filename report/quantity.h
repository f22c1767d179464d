// rotorbench report: numbers for people — trade units and "value ± u" with sensible digits.
//
// Each figure is shown in the unit bench people read (model/units.h converts; nothing else
// here multiplies by a unit factor), with its standard uncertainty rounded to two
// significant digits and the value rounded to the same decimal place (GUM, JCGM 100:2008
// §7.2.6). Pure functions; thread-safe.
#pragma once

#include <string>

namespace rb::report {

/// How one kind of quantity is displayed: the unit text and the conversion from SI.
struct DisplayUnit {
  const char* unit;           ///< e.g. "rpm", "mN·m"
  double (*from_si)(double);  ///< SI value → displayed value
};

// The display units used throughout the reports and terminal tables.
DisplayUnit SpeedUnit();          ///< rpm
DisplayUnit CurrentUnit();        ///< A
DisplayUnit VoltageUnit();        ///< V
DisplayUnit TorqueUnit();         ///< mN·m
DisplayUnit PowerUnit();          ///< W
DisplayUnit EfficiencyUnit();     ///< % (of a fraction)
DisplayUnit ResistanceUnit();     ///< Ω
DisplayUnit KvUnit();             ///< rpm/V (from Ke [V·s/rad]; not linear — see KvU)
DisplayUnit KtUnit();             ///< mN·m/A (from Kt = Ke)
DisplayUnit InertiaUnit();        ///< g·cm²
DisplayUnit ViscousUnit();        ///< mN·m per 1000 rpm
DisplayUnit InductanceUnit();     ///< mH
DisplayUnit TimeMsUnit();         ///< ms
DisplayUnit MotorConstantUnit();  ///< mN·m/√W (Km = Kt/√R)

/// "1.803 ± 0.012": u to two significant digits, the value to the same decimal place.
/// Without a usable u (0, NaN) the value gets `digits` significant digits. Very large or
/// small numbers use a shared power of ten: "(4.51 ± 0.12)e-9".
std::string FormatWithU(double value, double u, int digits = 4);

/// A value with `digits` significant digits (no exponent between 1e-4 and 1e7); "–" for NaN.
std::string FormatValue(double value, int digits = 4);

/// A setting such as a supply voltage: up to `digits` significant digits, no trailing zeros
/// ("6", "4.5", "12.25").
std::string FormatSetting(double value, int digits = 4);

/// u as a percentage of |value| ("0.67 %"); "–" when not meaningful.
std::string FormatRelative(double value, double u);

/// A value and its standard uncertainty converted from SI by a linear display unit; for
/// a non-linear conversion (Kv = 1/Ke) the uncertainty is scaled by the derivative.
struct Shown {
  double value = 0, u = 0;
};
Shown ToDisplay(const DisplayUnit& unit, double si_value, double si_u);

}  // namespace rb::report
