#include "model/winding.h"

#include <cctype>
#include <charconv>
#include <numbers>
#include <vector>

#include "model/commutator.h"
#include "model/copper.h"

namespace rb::model {
namespace {

constexpr const char* kWindingForm =
    "expected TURNSxWIRE or TURNSxSTRANDSxWIRE, e.g. 60xAWG30, 36xAWG27, 36x2xAWG30, "
    "48x0.3mm";

bool ParseCount(std::string_view s, int* out) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  if (s.empty()) return false;
  const auto [p, ec] = std::from_chars(s.data(), s.data() + s.size(), *out);
  return ec == std::errc() && p == s.data() + s.size();
}

}  // namespace

std::string Winding::Spec() const {
  std::string s = std::to_string(turns) + "x";
  if (strands != 1) s += std::to_string(strands) + "x";
  return s + wire.Name();
}

double Winding::CopperArea() const { return turns * strands * wire.Area(); }

double Winding::FootprintArea() const { return turns * strands * wire.od_nom * wire.od_nom; }

double Winding::CoilResistance20(double mean_turn_length) const {
  return kCopperResistivity20 * turns * mean_turn_length / (strands * wire.Area());
}

Result<Winding> ParseWinding(std::string_view spec, int coils) {
  const auto bad = [&](const std::string& why) {
    return Status::InvalidArgument("winding '" + std::string(spec) + "': " + why);
  };
  if (coils < 3) return bad("an armature needs at least 3 coils");
  // Split on 'x' (or 'X') only before the wire: the wire itself never starts with a digit
  // after its own 'x', so take the numeric fields from the left.
  std::vector<std::string_view> parts;
  std::string_view rest = spec;
  while (parts.size() < 2) {
    const size_t x = rest.find_first_of("xX*");
    if (x == std::string_view::npos) break;
    int probe = 0;
    if (!ParseCount(rest.substr(0, x), &probe)) break;
    parts.push_back(rest.substr(0, x));
    rest = rest.substr(x + 1);
  }
  if (parts.empty()) return bad(kWindingForm);
  Winding w;
  w.coils = coils;
  ParseCount(parts[0], &w.turns);
  if (parts.size() == 2) ParseCount(parts[1], &w.strands);
  if (w.turns < 1 || w.turns > 100000) return bad("turns per coil must be 1 to 100000");
  if (w.strands < 1 || w.strands > 100) return bad("strands in hand must be 1 to 100");
  Result<Wire> wire = ParseWire(rest);
  if (!wire.ok()) return bad(wire.status().message() + "; " + kWindingForm);
  w.wire = *wire;
  return w;
}

double BrushToBrushResistance(int coils, double coil_resistance, double brush_fraction) {
  return coil_resistance * MeanBrushResistanceFactor(coils, brush_fraction);
}

}  // namespace rb::model
