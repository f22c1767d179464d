// rotorbench model: the one place where trade units meet SI.
//
// Everything inside rotorbench is SI (s, rad/s, A, V, Ω, H, N·m, kg·m², V·s/rad).
// Trade units (rpm, rpm/V, mN·m, mN·m/A, g·cm², mΩ, ms, mA, mV) appear only at the
// edges — CSV columns, command-line values, tables, reports — and are converted here.
// Pure functions and constant tables; thread-safe.
#pragma once

#include <numbers>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace rb::units {

inline constexpr double kPi = std::numbers::pi;
inline constexpr double kRadPerSecPerRpm = 2.0 * kPi / 60.0;  // 1 rpm = 2π/60 rad/s

// ---- Speed
constexpr double RpmToRadPerSec(double rpm) { return rpm * kRadPerSecPerRpm; }
constexpr double RadPerSecToRpm(double w) { return w / kRadPerSecPerRpm; }

// ---- Motor constants. Ke [V·s/rad] equals Kt [N·m/A] in SI.
/// Kv [rpm/V] = 60 / (2π · Ke).
constexpr double KeToKvRpmPerVolt(double ke) { return 1.0 / (ke * kRadPerSecPerRpm); }
constexpr double KvRpmPerVoltToKe(double kv) { return 1.0 / (kv * kRadPerSecPerRpm); }
constexpr double NmPerAToMilliNmPerA(double kt) { return kt * 1e3; }
constexpr double MilliNmPerAToNmPerA(double kt) { return kt * 1e-3; }

// ---- Torque, inertia, resistance
constexpr double NmToMilliNm(double t) { return t * 1e3; }
constexpr double MilliNmToNm(double t) { return t * 1e-3; }
constexpr double KgM2ToGCm2(double j) { return j * 1e7; }  // 1 kg·m² = 1e3 g · 1e4 cm²
constexpr double GCm2ToKgM2(double j) { return j * 1e-7; }
constexpr double OhmToMilliOhm(double r) { return r * 1e3; }
constexpr double MilliOhmToOhm(double r) { return r * 1e-3; }
/// Viscous friction: N·m·s/rad → mN·m per 1000 rpm (how bench people read it).
constexpr double ViscousToMilliNmPerKrpm(double b) { return b * 1e3 * RpmToRadPerSec(1000.0); }
constexpr double MilliHenryToHenry(double l) { return l * 1e-3; }
constexpr double HenryToMilliHenry(double l) { return l * 1e3; }

// ---- Temperature
constexpr double CelsiusToKelvin(double c) { return c + 273.15; }

// ---- Wire and armature dimensions (magnet wire is sold in mm, inches and AWG)
inline constexpr double kMetrePerInch = 0.0254;  // exact by definition
inline constexpr double kMetrePerFoot = 0.3048;  // exact by definition
constexpr double MmToMetre(double mm) { return mm * 1e-3; }
constexpr double MetreToMm(double m) { return m * 1e3; }
constexpr double Mm2ToMetre2(double mm2) { return mm2 * 1e-6; }
constexpr double Metre2ToMm2(double m2) { return m2 * 1e6; }
constexpr double InchToMetre(double in) { return in * kMetrePerInch; }
constexpr double MetreToInch(double m) { return m / kMetrePerInch; }
/// Resistance per length: Ω/m → Ω per 1000 ft (the NEMA magnet-wire tables' unit).
constexpr double OhmPerMetreToOhmPer1000Ft(double r) { return r * 1000.0 * kMetrePerFoot; }
constexpr double OhmPer1000FtToOhmPerMetre(double r) { return r / (1000.0 * kMetrePerFoot); }

/// Physical quantities that a column or option may carry.
/// kSpeedConstant is Kv (SI rad/(V·s), the reciprocal of Ke); kTorqueConstant is Kt (SI N·m/A).
enum class Quantity {
  kTime, kSpeed, kCurrent, kVoltage, kResistance, kTorque, kInertia,
  kSpeedConstant, kTorqueConstant
};

const char* QuantityName(Quantity q);

/// One accepted unit spelling for a quantity: value_SI = value * scale.
struct UnitDef {
  std::string_view name;  // as typed by the user, e.g. "ms", "rpm", "mA"
  Quantity quantity;
  double scale;           // multiply a value in this unit by scale to get SI
};

/// Looks up a unit spelling for a quantity (case-sensitive except for a few aliases).
/// Returns nothing for an unknown unit; see AcceptedUnits() for the error message.
std::optional<UnitDef> FindUnit(Quantity q, std::string_view name);

/// "s, ms, us" — the accepted spellings, for error messages.
std::string AcceptedUnits(Quantity q);

/// The SI unit name of a quantity ("s", "rad/s", "A", "V", ...).
const char* SiUnitName(Quantity q);

}  // namespace rb::units
