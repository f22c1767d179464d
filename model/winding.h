// rotorbench model: an armature winding — how many coils, how many turns of which wire,
// how they are connected — and what follows from it by first principles.
//
// Connection: the small 2-pole PM motor's armature is a closed ring of K coils (one per
// slot), each junction on a commutator segment, two brushes 180° apart (model/
// commutator.h). The common 3-slot "delta" armature is K = 3; 5- and 7-slot armatures
// are the same ring with more coils. Several wires wound together in hand act as one
// conductor of the summed area (common practice, no source).
// Geometry (optional): a coil wound on a tooth a × b (a = stack length plus end
// insulation, b = tooth width) to a build depth c has mean turn length
// MLT = 2(a + b) + π·c (domain.md §3.2). Each slot of a ring armature holds one side of
// each of two coils, so a coil side gets half a slot (domain.md §3.2).
// SI inside (metres, m², Ω). Pure; thread-safe.
#pragma once

#include <cmath>
#include <numbers>
#include <string>
#include <string_view>

#include "base/status.h"
#include "model/wire.h"

namespace rb::model {

/// Armature dimensions; NaN = not measured.
struct ArmatureDims {
  double stack_length = NAN;  ///< a: lamination stack length incl. end insulation [m]
  double tooth_width = NAN;   ///< b: width of the tooth (pole shank) the coil sits on [m]
  double build_depth = NAN;   ///< c: depth of the OLD coil's build around the tooth [m]
  double slot_area = NAN;     ///< usable cross-section of one slot (inside the liner) [m²]

  bool HasMeanTurn() const {
    return std::isfinite(stack_length) && std::isfinite(tooth_width) &&
           std::isfinite(build_depth);
  }
  bool HasSlotArea() const { return std::isfinite(slot_area) && slot_area > 0; }
};

/// Mean length of one turn around a rectangular tooth a × b at build depth c:
/// MLT = 2(a + b) + π·c [m].
constexpr double MeanTurnLength(double a, double b, double c) {
  return 2.0 * (a + b) + std::numbers::pi * c;
}

struct Winding {
  int coils = 3;    ///< coils = slots = commutator segments (ring armature)
  int turns = 0;    ///< turns per coil
  int strands = 1;  ///< wires wound together in hand
  Wire wire;

  /// "60xAWG30" or "36x2xAWG27" (with strands), the form ParseWinding accepts.
  std::string Spec() const;
  /// Copper cross-section of one coil side: turns·strands·π d²/4 [m²].
  double CopperArea() const;
  /// Space one coil side takes in the slot, each insulated wire counted as the square
  /// around it: turns·strands·od² [m²] (compared between windings, not an absolute fit).
  double FootprintArea() const;
  /// Resistance of one coil at 20 °C for a mean turn length [Ω]: ρ20·N·MLT/(strands·A).
  double CoilResistance20(double mean_turn_length) const;
};

/// Parses TURNSxWIRE or TURNSxSTRANDSxWIRE ("60xAWG30", "36x2xAWG27", "48x0.3mm:grade2");
/// the wire as in ParseWire. `coils` is the armature's coil count (3 for the common
/// 3-slot armature). The error names the text and the accepted form.
Result<Winding> ParseWinding(std::string_view spec, int coils = 3);

/// Resistance between the brushes of a ring armature, averaged over rotor position,
/// from one coil's resistance (model/commutator.h MeanBrushResistanceFactor) [Ω].
double BrushToBrushResistance(int coils, double coil_resistance, double brush_fraction);

}  // namespace rb::model
