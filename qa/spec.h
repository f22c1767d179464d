// rotorbench qa: acceptance specifications — what a motor of a type must measure.
//
// A spec is a TOML file (docs/qa-spec.md): a name, a format version, and per quantity a
// nominal with a tolerance (± absolute, ± percent, or min/max) in a trade unit written
// out. Limits are held in SI (Kv as rad/(V·s)); the unit as written is kept for display.
// Parsing errors are one line naming the file, the line and what was expected.
// Pure functions and value types; thread-safe.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "model/units.h"

namespace rb::qa {

/// The spec format version this build reads and writes ("rotorbench_spec = 1").
inline constexpr int kSpecFormatVersion = 1;

/// Quantities a spec may limit. Never rename the keys: spec files use them.
enum class SpecQuantity {
  kKv,              ///< speed constant Kv = 1/Ke
  kKt,              ///< torque constant Kt (= Ke in SI)
  kR20,             ///< terminal resistance referred to 20 °C (IEC 60028 copper)
  kNoLoadSpeed,     ///< free-running speed at a stated voltage
  kNoLoadCurrent,   ///< free-running current at a stated voltage
  kStallCurrent,    ///< locked-rotor current at a stated voltage
  kStallTorque,     ///< locked-rotor torque at a stated voltage
  kFrictionTorque,  ///< Coulomb (running) friction torque Tc
  kInertia,         ///< rotor inertia J
};

struct QuantityInfo {
  SpecQuantity id;
  std::string_view key;    ///< TOML table name, e.g. "no_load_speed"
  std::string_view title;  ///< for tables, e.g. "no-load speed"
  units::Quantity unit_quantity;
  bool needs_voltage;
};

const std::vector<QuantityInfo>& AllQuantities();
const QuantityInfo& Info(SpecQuantity q);
/// "kv, kt, r20, ..." for error messages.
std::string QuantityKeys();

/// One limited quantity. All values SI.
struct Limit {
  SpecQuantity quantity = SpecQuantity::kKv;
  std::string unit;       ///< as written in the spec, e.g. "rpm/V"
  double unit_scale = 1;  ///< SI value = value in `unit` × unit_scale
  std::optional<double> nominal;
  std::optional<double> lower, upper;  ///< at least one is set
  double voltage = 0;                  ///< supply voltage [V] for quantities that need one, else 0
  std::string tolerance;  ///< the tolerance as written, for display ("± 5 %", "min/max")
  int line = 0;           ///< line of the quantity's table in the spec file

  double ToUnit(double si) const { return si / unit_scale; }
  /// "no-load speed at 12 V", "Kv"
  std::string Label() const;
};

struct Spec {
  int format_version = kSpecFormatVersion;
  std::string name;
  std::string description;
  std::string source;  ///< the file it came from (for messages)
  std::vector<Limit> limits;
  /// Batch rule: the batch is accepted when at most this many motors fail.
  int accept_number = 0;
};

/// Parses spec text; `source` names it in error messages ("spec.toml:12: ...").
Result<Spec> ParseSpec(std::string_view text, const std::string& source);
/// Reads and parses a spec file.
Result<Spec> LoadSpec(const std::string& path);

}  // namespace rb::qa
