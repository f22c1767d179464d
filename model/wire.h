// rotorbench model: round enamelled copper magnet wire — sizes, insulation, resistance.
//
// Bare diameters: AWG from the ASTM B258 formula d(n) = 0.127 mm × 92^((36−n)/39), with the
// nominal value rounded as ASTM B258 tabulates it (4 significant figures, 0.0001 in for
// No. 44 and larger), which is the NEMA MW 1000 nominal; metric sizes are the nominal
// diameter itself. Bare tolerances: NEMA ±1 % with a ±0.0001 in floor (a rule that
// reproduces the NEMA MW 1000 rows quoted in domain.md §2.1) and IEC 60317-0-1 ±1 % with
// a ±0.003 mm floor (from memory).
// Overall (enamelled) diameters: single/heavy build (NEMA MW 1000) and grade 1/grade 2
// (IEC 60317) from the Elektrisola tables as encoded in OpenMagnetics/MAS
// `data/wires.ndjson` (domain.md §2.3). Sizes between table rows get the enamel build
// interpolated in log(diameter); outside the table it is extrapolated as a fixed fraction
// of the diameter. Each Wire says which.
// Resistance: IEC 60028 annealed copper (model/copper.h). SI inside (metres, Ω/m).
// Pure functions over constant tables; thread-safe.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"

namespace rb::model {

/// Film insulation grade. NEMA MW 1000 single/heavy build; IEC 60317 grade 1/grade 2.
enum class Insulation { kBare, kSingle, kHeavy, kGrade1, kGrade2 };

/// "bare", "single", "heavy", "grade1", "grade2".
std::string_view InsulationName(Insulation i);
Result<Insulation> ParseInsulation(std::string_view name);

/// Where an overall diameter came from.
enum class DiameterSource { kTable, kTableNominalOnly, kInterpolated, kExtrapolated, kBare };
std::string_view DiameterSourceName(DiameterSource s);

/// One magnet wire: bare copper and enamelled overall diameters, nominal with limits.
struct Wire {
  int awg = -1;  ///< AWG number (0 = No. 0), or −1 for a metric (mm) size
  double d_nom = 0, d_min = 0, d_max = 0;     ///< bare copper diameter [m]
  Insulation insulation = Insulation::kHeavy;
  double od_nom = 0, od_min = 0, od_max = 0;  ///< overall diameter over the enamel [m]
  DiameterSource od_source = DiameterSource::kTable;

  /// "AWG27" or "0.355mm" (the form ParseWire accepts), without the insulation.
  std::string Name() const;
  /// Bare copper cross-section at the nominal diameter [m²].
  double Area() const;
  /// Resistance per metre at 20 °C, IEC 60028 copper, nominal diameter [Ω/m].
  double ResistancePerMetre20() const;
  /// Relative standard uncertainty of the copper area from the bare-diameter limits,
  /// taken as a rectangular distribution: u(A)/A = 2·u(d)/d, u(d) = (max − min)/(2√3).
  double AreaRelativeU() const;
};

/// Exact ASTM B258 diameter of AWG n [m] (n = 0 is No. 0; 00 is −1, 000 is −2, ...).
double AwgExactDiameter(int n);
/// The ASTM B258 tabulated (rounded) diameter of AWG n [m]; the NEMA nominal.
double AwgNominalDiameter(int n);

/// A wire of AWG n (0 ≤ n ≤ 46) with the given insulation.
Result<Wire> AwgWire(int n, Insulation insulation = Insulation::kHeavy);
/// A metric wire of bare nominal diameter d [m] (0.02 mm ≤ d ≤ 5 mm).
Result<Wire> MetricWire(double d, Insulation insulation = Insulation::kGrade1);

/// Parses "AWG27", "awg 27", "0.355mm", optionally with ":single", ":heavy", ":grade1",
/// ":grade2" or ":bare". Defaults: heavy build for AWG, grade 1 for mm sizes. The error
/// names the text and the accepted forms.
Result<Wire> ParseWire(std::string_view spec);

/// The catalogue searched by rewind suggestions: AWG 18–40 (heavy build unless told
/// otherwise) and the IEC 60317 R20 series 0.10–1.00 mm (grade 1 unless told otherwise).
struct CatalogueOptions {
  bool awg = true;
  bool metric = true;
  Insulation awg_insulation = Insulation::kHeavy;
  Insulation metric_insulation = Insulation::kGrade1;
};
std::vector<Wire> WireCatalogue(const CatalogueOptions& options = {});

}  // namespace rb::model
