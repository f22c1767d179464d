#include "model/wire.h"

#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <numbers>
#include <optional>
#include <span>

#include "model/copper.h"
#include "model/units.h"

namespace rb::model {
namespace {

/// One row of an overall-diameter table, in mm as published. NaN = not published.
struct OdRow {
  double bare;
  double od_min, od_nom, od_max;
};

// NEMA MW 1000 film-insulated round copper, Elektrisola data as encoded in
// OpenMagnetics/MAS data/wires.ndjson (domain.md §2.3). AWG 20 and 22 carry a nominal only.
constexpr std::array<OdRow, 9> kSingleBuild = {{
    {0.813, NAN, 0.851, NAN},
    {0.643, NAN, 0.676, NAN},
    {0.511, 0.531, 0.541, 0.551},
    {0.404, 0.422, 0.431, 0.439},
    {0.320, 0.338, 0.347, 0.356},
    {0.254, 0.269, 0.277, 0.284},
    {0.203, 0.216, 0.224, 0.231},
    {0.160, 0.170, 0.177, 0.183},
    {0.127, 0.135, 0.141, 0.147},
}};
constexpr std::array<OdRow, 9> kHeavyBuild = {{
    {0.813, NAN, 0.879, NAN},
    {0.643, NAN, 0.701, NAN},
    {0.511, 0.554, 0.565, 0.577},
    {0.404, 0.442, 0.452, 0.462},
    {0.320, 0.358, 0.366, 0.373},
    {0.254, 0.287, 0.295, 0.302},
    {0.203, 0.231, 0.240, 0.249},
    {0.160, 0.183, 0.191, 0.198},
    {0.127, 0.145, 0.152, 0.160},
}};
// IEC 60317 grade 1 / grade 2 overall diameter min–max, same source; nominal = midpoint.
constexpr std::array<OdRow, 6> kGrade1 = {{
    {0.100, 0.108, 0.1125, 0.117},
    {0.200, 0.214, 0.220, 0.226},
    {0.250, 0.267, 0.274, 0.281},
    {0.315, 0.334, 0.3415, 0.349},
    {0.400, 0.421, 0.430, 0.439},
    {0.500, 0.524, 0.534, 0.544},
}};
constexpr std::array<OdRow, 6> kGrade2 = {{
    {0.100, 0.118, 0.1215, 0.125},
    {0.200, 0.227, 0.233, 0.239},
    {0.250, 0.282, 0.2895, 0.297},
    {0.315, 0.350, 0.3585, 0.367},
    {0.400, 0.440, 0.4495, 0.459},
    {0.500, 0.545, 0.5555, 0.566},
}};

std::span<const OdRow> TableFor(Insulation ins) {
  switch (ins) {
    case Insulation::kSingle: return kSingleBuild;
    case Insulation::kHeavy: return kHeavyBuild;
    case Insulation::kGrade1: return kGrade1;
    case Insulation::kGrade2: return kGrade2;
    case Insulation::kBare: break;
  }
  return {};
}

/// Enamel build as fractions of the bare diameter: od = d·(1 + f).
struct BuildFraction {
  double f_min, f_nom, f_max;
};

/// The row's build fractions; a nominal-only row borrows the relative half-range of the
/// nearest full row.
BuildFraction RowFraction(std::span<const OdRow> table, size_t i) {
  const OdRow& r = table[i];
  BuildFraction f{(r.od_min / r.bare) - 1, (r.od_nom / r.bare) - 1, (r.od_max / r.bare) - 1};
  if (std::isnan(r.od_min) || std::isnan(r.od_max)) {
    for (size_t k = 0; k < table.size(); ++k) {
      const size_t j = i + k < table.size() ? i + k : table.size() - 1;
      if (!std::isnan(table[j].od_min) && !std::isnan(table[j].od_max)) {
        const double lo = (table[j].od_nom - table[j].od_min) / table[j].bare;
        const double hi = (table[j].od_max - table[j].od_nom) / table[j].bare;
        f.f_min = f.f_nom - lo;
        f.f_max = f.f_nom + hi;
        break;
      }
    }
  }
  return f;
}

/// Overall diameter limits for bare diameter d_mm from a table, with its source.
void OverallDiameter(Insulation ins, double d_mm, Wire* w) {
  std::span<const OdRow> table = TableFor(ins);
  if (table.empty()) {
    w->od_min = w->d_min;
    w->od_nom = w->d_nom;
    w->od_max = w->d_max;
    w->od_source = DiameterSource::kBare;
    return;
  }
  // Rows sorted by bare diameter, ascending.
  std::vector<size_t> order(table.size());
  for (size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(),
            [&](size_t a, size_t b) { return table[a].bare < table[b].bare; });
  BuildFraction f{};
  const double tol = 1.5e-3;  // mm: published rows round the bare diameter to 0.001 mm
  bool done = false;
  for (size_t i : order) {
    if (std::fabs(table[i].bare - d_mm) <= tol) {
      f = RowFraction(table, i);
      // Use the published overall diameters as they are, not the fractions.
      const OdRow& r = table[i];
      const double scale = d_mm / r.bare;
      w->od_nom = units::MmToMetre(r.od_nom * scale);
      w->od_min = units::MmToMetre(std::isnan(r.od_min) ? d_mm * (1 + f.f_min) : r.od_min * scale);
      w->od_max = units::MmToMetre(std::isnan(r.od_max) ? d_mm * (1 + f.f_max) : r.od_max * scale);
      w->od_source = std::isnan(r.od_min) ? DiameterSource::kTableNominalOnly
                                          : DiameterSource::kTable;
      return;
    }
  }
  const size_t first = order.front(), last = order.back();
  if (d_mm < table[first].bare) {
    f = RowFraction(table, first);
    w->od_source = DiameterSource::kExtrapolated;
  } else if (d_mm > table[last].bare) {
    f = RowFraction(table, last);
    w->od_source = DiameterSource::kExtrapolated;
  } else {
    for (size_t k = 0; k + 1 < order.size() && !done; ++k) {
      const size_t a = order[k], b = order[k + 1];
      if (d_mm >= table[a].bare && d_mm <= table[b].bare) {
        const BuildFraction fa = RowFraction(table, a), fb = RowFraction(table, b);
        // Interpolate the absolute build (od − d) in log(d).
        const double t = std::log(d_mm / table[a].bare) / std::log(table[b].bare / table[a].bare);
        auto lerp = [&](double xa, double xb) {
          const double ba = xa * table[a].bare, bb = xb * table[b].bare;
          return (ba + t * (bb - ba)) / d_mm;
        };
        f = {lerp(fa.f_min, fb.f_min), lerp(fa.f_nom, fb.f_nom), lerp(fa.f_max, fb.f_max)};
        done = true;
      }
    }
    w->od_source = DiameterSource::kInterpolated;
  }
  w->od_min = units::MmToMetre(d_mm * (1 + f.f_min));
  w->od_nom = units::MmToMetre(d_mm * (1 + f.f_nom));
  w->od_max = units::MmToMetre(d_mm * (1 + f.f_max));
}

std::string Lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string_view Trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

constexpr const char* kWireForms =
    "expected AWG<n> (e.g. AWG27) or <diameter>mm (e.g. 0.355mm), optionally followed by "
    ":single, :heavy, :grade1, :grade2 or :bare";

}  // namespace

std::string_view InsulationName(Insulation i) {
  switch (i) {
    case Insulation::kBare: return "bare";
    case Insulation::kSingle: return "single";
    case Insulation::kHeavy: return "heavy";
    case Insulation::kGrade1: return "grade1";
    case Insulation::kGrade2: return "grade2";
  }
  return "heavy";
}

Result<Insulation> ParseInsulation(std::string_view name) {
  const std::string n = Lower(Trim(name));
  for (Insulation i : {Insulation::kBare, Insulation::kSingle, Insulation::kHeavy,
                       Insulation::kGrade1, Insulation::kGrade2}) {
    if (n == InsulationName(i)) return i;
  }
  if (n == "grade 1" || n == "g1") return Insulation::kGrade1;
  if (n == "grade 2" || n == "g2") return Insulation::kGrade2;
  return Status::InvalidArgument("insulation '" + std::string(name) +
                                 "': expected single, heavy, grade1, grade2 or bare");
}

std::string_view DiameterSourceName(DiameterSource s) {
  switch (s) {
    case DiameterSource::kTable: return "table";
    case DiameterSource::kTableNominalOnly: return "table (nominal only; limits estimated)";
    case DiameterSource::kInterpolated: return "interpolated between table rows";
    case DiameterSource::kExtrapolated: return "extrapolated beyond the table";
    case DiameterSource::kBare: return "bare copper";
  }
  return "table";
}

std::string Wire::Name() const {
  if (awg >= 0) return "AWG" + std::to_string(awg);
  // Shortest mm text that round-trips to 1 µm.
  char buf[32];
  const double mm = units::MetreToMm(d_nom);
  for (int digits = 2; digits <= 4; ++digits) {
    std::snprintf(buf, sizeof buf, "%.*f", digits, mm);
    if (std::fabs(std::strtod(buf, nullptr) - mm) < 5e-4) break;
  }
  return std::string(buf) + "mm";
}

double Wire::Area() const { return std::numbers::pi / 4.0 * d_nom * d_nom; }

double Wire::ResistancePerMetre20() const { return kCopperResistivity20 / Area(); }

double Wire::AreaRelativeU() const {
  const double ud = (d_max - d_min) / (2.0 * std::sqrt(3.0));
  return 2.0 * ud / d_nom;
}

double AwgExactDiameter(int n) {
  return units::MmToMetre(0.127 * std::pow(92.0, (36.0 - n) / 39.0));
}

double AwgNominalDiameter(int n) {
  const double inch = units::MetreToInch(AwgExactDiameter(n));
  // ASTM B258: at most 4 significant figures, 0.0001 in resolution down to No. 44.
  const double resolution = n <= 44 ? 1e-4 : 1e-5;
  const double four_sig = std::pow(10.0, std::floor(std::log10(inch)) - 3);
  const double step = std::max(resolution, four_sig);
  return units::InchToMetre(std::round(inch / step) * step);
}

Result<Wire> AwgWire(int n, Insulation insulation) {
  if (n < 0 || n > 44) {
    return Status::InvalidArgument("AWG" + std::to_string(n) +
                                   ": magnet-wire sizes from AWG0 to AWG44 are supported");
  }
  Wire w;
  w.awg = n;
  w.insulation = insulation;
  w.d_nom = AwgNominalDiameter(n);
  // NEMA MW 1000 bare tolerance: ±1 % rounded to 0.0001 in, at least ±0.0001 in.
  const double nom_in = units::MetreToInch(w.d_nom);
  const double tol_in = std::max(1e-4, std::round(0.01 * nom_in / 1e-4) * 1e-4);
  w.d_min = units::InchToMetre(nom_in - tol_in);
  w.d_max = units::InchToMetre(nom_in + tol_in);
  OverallDiameter(insulation, units::MetreToMm(w.d_nom), &w);
  return w;
}

Result<Wire> MetricWire(double d, Insulation insulation) {
  if (!(d >= units::MmToMetre(0.02) && d <= units::MmToMetre(5.0))) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "wire diameter %g mm: expected 0.02 mm to 5 mm",
                  units::MetreToMm(d));
    return Status::InvalidArgument(buf);
  }
  Wire w;
  w.awg = -1;
  w.insulation = insulation;
  w.d_nom = d;
  // IEC 60317-0-1 conductor tolerance, from memory: ±1 %, at least ±0.003 mm.
  const double tol = std::max(units::MmToMetre(0.003), 0.01 * d);
  w.d_min = d - tol;
  w.d_max = d + tol;
  OverallDiameter(insulation, units::MetreToMm(d), &w);
  return w;
}

Result<Wire> ParseWire(std::string_view spec) {
  std::string_view body = Trim(spec);
  std::optional<Insulation> ins;
  if (const size_t colon = body.find(':'); colon != std::string_view::npos) {
    Result<Insulation> i = ParseInsulation(body.substr(colon + 1));
    if (!i.ok()) return i.status().WithPrefix("wire '" + std::string(spec) + "'");
    ins = *i;
    body = Trim(body.substr(0, colon));
  }
  const std::string low = Lower(body);
  const auto bad = [&] {
    return Status::InvalidArgument("wire '" + std::string(spec) + "': " + kWireForms);
  };
  if (low.rfind("awg", 0) == 0) {
    const std::string_view num = Trim(std::string_view(low).substr(3));
    int n = -1;
    const auto [p, ec] = std::from_chars(num.data(), num.data() + num.size(), n);
    if (ec != std::errc() || p != num.data() + num.size() || num.empty()) return bad();
    Result<Wire> w = AwgWire(n, ins.value_or(Insulation::kHeavy));
    if (!w.ok()) return Status::InvalidArgument("wire '" + std::string(spec) + "': " + w.status().message());
    return w;
  }
  if (low.size() > 2 && low.compare(low.size() - 2, 2, "mm") == 0) {
    const std::string_view num = Trim(std::string_view(low).substr(0, low.size() - 2));
    double mm = NAN;
    const auto [p, ec] = std::from_chars(num.data(), num.data() + num.size(), mm);
    if (ec != std::errc() || p != num.data() + num.size() || num.empty()) return bad();
    Result<Wire> w = MetricWire(units::MmToMetre(mm), ins.value_or(Insulation::kGrade1));
    if (!w.ok()) return Status::InvalidArgument("wire '" + std::string(spec) + "': " + w.status().message());
    return w;
  }
  return bad();
}

std::vector<Wire> WireCatalogue(const CatalogueOptions& options) {
  std::vector<Wire> out;
  if (options.awg) {
    for (int n = 18; n <= 40; ++n) out.push_back(*AwgWire(n, options.awg_insulation));
  }
  if (options.metric) {
    // IEC 60317-0-1 preferred nominal diameters (R20 series), from memory.
    for (double mm : {0.100, 0.112, 0.125, 0.140, 0.160, 0.180, 0.200, 0.224, 0.250, 0.280,
                      0.315, 0.355, 0.400, 0.450, 0.500, 0.560, 0.630, 0.710, 0.800, 0.900,
                      1.000}) {
      out.push_back(*MetricWire(units::MmToMetre(mm), options.metric_insulation));
    }
  }
  std::sort(out.begin(), out.end(), [](const Wire& a, const Wire& b) { return a.d_nom < b.d_nom; });
  return out;
}

}  // namespace rb::model
