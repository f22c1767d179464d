#include "model/units.h"

#include <array>

namespace rb::units {
namespace {

constexpr std::array kUnits = {
    UnitDef{"s", Quantity::kTime, 1.0},
    UnitDef{"ms", Quantity::kTime, 1e-3},
    UnitDef{"us", Quantity::kTime, 1e-6},
    UnitDef{"rad/s", Quantity::kSpeed, 1.0},
    UnitDef{"rad_s", Quantity::kSpeed, 1.0},
    UnitDef{"rpm", Quantity::kSpeed, kRadPerSecPerRpm},
    UnitDef{"rps", Quantity::kSpeed, 2.0 * kPi},
    UnitDef{"Hz", Quantity::kSpeed, 2.0 * kPi},  // revolutions per second
    UnitDef{"A", Quantity::kCurrent, 1.0},
    UnitDef{"mA", Quantity::kCurrent, 1e-3},
    UnitDef{"V", Quantity::kVoltage, 1.0},
    UnitDef{"mV", Quantity::kVoltage, 1e-3},
    UnitDef{"ohm", Quantity::kResistance, 1.0},
    UnitDef{"mohm", Quantity::kResistance, 1e-3},
    UnitDef{"N.m", Quantity::kTorque, 1.0},
    UnitDef{"mN.m", Quantity::kTorque, 1e-3},
    UnitDef{"kg.m2", Quantity::kInertia, 1.0},
    UnitDef{"g.cm2", Quantity::kInertia, 1e-7},
    UnitDef{"rad/(V.s)", Quantity::kSpeedConstant, 1.0},
    UnitDef{"rpm/V", Quantity::kSpeedConstant, kRadPerSecPerRpm},
    UnitDef{"N.m/A", Quantity::kTorqueConstant, 1.0},
    UnitDef{"mN.m/A", Quantity::kTorqueConstant, 1e-3},
};

// Lower-case spellings people type for the same unit.
struct Alias {
  std::string_view alias;
  std::string_view name;
};
constexpr std::array kAliases = {
    Alias{"sec", "s"},   Alias{"msec", "ms"}, Alias{"µs", "us"}, Alias{"a", "A"},
    Alias{"ma", "mA"},   Alias{"v", "V"},     Alias{"mv", "mV"}, Alias{"RPM", "rpm"},
    Alias{"hz", "Hz"},   Alias{"rad_per_s", "rad/s"},
    // The spellings of README and reports (middle dot, superscript, Greek capital omega).
    Alias{"N·m", "N.m"}, Alias{"mN·m", "mN.m"}, Alias{"N·m/A", "N.m/A"},
    Alias{"mN·m/A", "mN.m/A"}, Alias{"g·cm²", "g.cm2"}, Alias{"kg·m²", "kg.m2"},
    Alias{"Ω", "ohm"}, Alias{"mΩ", "mohm"}, Alias{"RPM/V", "rpm/V"},
};

}  // namespace

const char* QuantityName(Quantity q) {
  switch (q) {
    case Quantity::kTime: return "time";
    case Quantity::kSpeed: return "speed";
    case Quantity::kCurrent: return "current";
    case Quantity::kVoltage: return "voltage";
    case Quantity::kResistance: return "resistance";
    case Quantity::kTorque: return "torque";
    case Quantity::kInertia: return "inertia";
    case Quantity::kSpeedConstant: return "speed constant";
    case Quantity::kTorqueConstant: return "torque constant";
  }
  return "?";
}

const char* SiUnitName(Quantity q) {
  switch (q) {
    case Quantity::kTime: return "s";
    case Quantity::kSpeed: return "rad/s";
    case Quantity::kCurrent: return "A";
    case Quantity::kVoltage: return "V";
    case Quantity::kResistance: return "ohm";
    case Quantity::kTorque: return "N.m";
    case Quantity::kInertia: return "kg.m2";
    case Quantity::kSpeedConstant: return "rad/(V.s)";
    case Quantity::kTorqueConstant: return "N.m/A";
  }
  return "?";
}

std::optional<UnitDef> FindUnit(Quantity q, std::string_view name) {
  for (const Alias& a : kAliases) {
    if (a.alias == name) {
      name = a.name;
      break;
    }
  }
  for (const UnitDef& u : kUnits) {
    if (u.quantity == q && u.name == name) return u;
  }
  return std::nullopt;
}

std::string AcceptedUnits(Quantity q) {
  std::string out;
  for (const UnitDef& u : kUnits) {
    if (u.quantity != q || u.name == "rad_s") continue;
    if (!out.empty()) out += ", ";
    out += u.name;
  }
  return out;
}

}  // namespace rb::units
