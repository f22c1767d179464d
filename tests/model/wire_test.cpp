// Magnet wire: AWG sizes (ASTM B258), bare-copper resistance (NEMA MW 1000, IEC 60028),
// enamelled overall diameters (NEMA MW 1000 / IEC 60317 as tabulated by Elektrisola,
// encoded in OpenMagnetics/MAS data/wires.ndjson; domain.md §2.3), and parsing.
#include <doctest/doctest.h>

#include <cmath>
#include <utility>

#include "model/copper.h"
#include "model/units.h"
#include "model/wire.h"

using namespace rb::model;
using rb::Result;
namespace units = rb::units;

namespace {
double Inch(double m) { return units::MetreToInch(m); }
double Mm(double m) { return units::MetreToMm(m); }
}  // namespace

TEST_CASE("AWG 20–36 nominal diameters equal the ASTM B258 tabulated values") {
  // ASTM B258 table (4 significant figures, 0.0001 in), as listed in domain.md §2.1.
  const std::pair<int, double> table[] = {
      {20, 0.0320}, {21, 0.0285}, {22, 0.0253}, {23, 0.0226}, {24, 0.0201}, {25, 0.0179},
      {26, 0.0159}, {27, 0.0142}, {28, 0.0126}, {29, 0.0113}, {30, 0.0100}, {31, 0.0089},
      {32, 0.0080}, {33, 0.0071}, {34, 0.0063}, {35, 0.0056}, {36, 0.0050}};
  for (auto [n, inch] : table) {
    CAPTURE(n);
    CHECK(Inch(AwgNominalDiameter(n)) == doctest::Approx(inch).epsilon(1e-9));
    // The exact formula stays within half a table step of the tabulated value.
    CHECK(std::fabs(Inch(AwgExactDiameter(n)) - inch) <= 0.5e-4 + 1e-12);
  }
  // Defining points of the formula (ASTM B258): No. 36 = 0.0050 in, No. 0000 = 0.4600 in.
  CHECK(Inch(AwgExactDiameter(36)) == doctest::Approx(0.005).epsilon(1e-12));
  CHECK(Inch(AwgExactDiameter(-3)) == doctest::Approx(0.46).epsilon(1e-12));
  // Step ratio 92^(1/39) = 1.1229322 (domain.md §2.1).
  CHECK(AwgExactDiameter(29) / AwgExactDiameter(30) == doctest::Approx(1.1229322).epsilon(1e-7));
}

TEST_CASE("bare-copper resistance per length matches the NEMA MW 1000 table at 20 °C") {
  // NEMA MW 1000 bare copper, Ω per 1000 ft: min / nom / max (domain.md §2.1). The min
  // resistance belongs to the max diameter and vice versa. NEMA prints 4 digits.
  struct Row {
    int awg;
    double r_min, r_nom, r_max;
  };
  const Row rows[] = {{20, 9.941, 10.13, 10.32},
                      {24, 25.17, 25.67, 26.19},
                      {30, 101.7, 103.7, 105.8},
                      {36, NAN, 414.8, NAN}};
  for (const Row& r : rows) {
    CAPTURE(r.awg);
    const Wire w = *AwgWire(r.awg);
    CHECK(units::OhmPerMetreToOhmPer1000Ft(w.ResistancePerMetre20()) ==
          doctest::Approx(r.r_nom).epsilon(6e-4));
    if (!std::isnan(r.r_min)) {
      const double a_max = 3.14159265358979 / 4 * w.d_max * w.d_max;
      const double a_min = 3.14159265358979 / 4 * w.d_min * w.d_min;
      CHECK(units::OhmPerMetreToOhmPer1000Ft(kCopperResistivity20 / a_max) ==
            doctest::Approx(r.r_min).epsilon(6e-4));
      CHECK(units::OhmPerMetreToOhmPer1000Ft(kCopperResistivity20 / a_min) ==
            doctest::Approx(r.r_max).epsilon(6e-4));
    }
  }
}

TEST_CASE("NEMA bare-diameter limits: AWG 20 ±0.0003, 24 ±0.0002, 30 and 36 ±0.0001 in") {
  // NEMA MW 1000 bare copper min/nom/max (domain.md §2.1).
  const std::pair<int, double> tol[] = {{20, 0.0003}, {24, 0.0002}, {30, 0.0001}, {36, 0.0001}};
  for (auto [n, t] : tol) {
    CAPTURE(n);
    const Wire w = *AwgWire(n);
    CHECK(Inch(w.d_max - w.d_nom) == doctest::Approx(t).epsilon(1e-9));
    CHECK(Inch(w.d_nom - w.d_min) == doctest::Approx(t).epsilon(1e-9));
  }
}

TEST_CASE("IEC 60028 copper: 1/58 Ω·mm²/m is 10.371 Ω·cmil/ft") {
  // 1 cmil = 5.0670748e-4 mm² (domain.md §2.2, recomputed there).
  const double ohm_mm2_per_m = kCopperResistivity20 * 1e6;
  CHECK(ohm_mm2_per_m / 5.0670748e-4 * units::kMetrePerFoot == doctest::Approx(10.371).epsilon(1e-4));
}

TEST_CASE("enamelled overall diameters come from the published table where it has the size") {
  // NEMA MW 1000 heavy build AWG 30: 0.0113–0.0119 in; single build AWG 24: 0.0209–0.0217 in;
  // heavy AWG 36: 0.0057–0.0063 in (domain.md §2.3, inch values).
  Wire w = *AwgWire(30, Insulation::kHeavy);
  CHECK(w.od_source == DiameterSource::kTable);
  CHECK(std::round(Inch(w.od_min) * 1e4) / 1e4 == doctest::Approx(0.0113));
  CHECK(std::round(Inch(w.od_max) * 1e4) / 1e4 == doctest::Approx(0.0119));
  w = *AwgWire(24, Insulation::kSingle);
  CHECK(std::round(Inch(w.od_min) * 1e4) / 1e4 == doctest::Approx(0.0209));
  CHECK(std::round(Inch(w.od_max) * 1e4) / 1e4 == doctest::Approx(0.0217));
  w = *AwgWire(36, Insulation::kHeavy);
  CHECK(std::round(Inch(w.od_min) * 1e4) / 1e4 == doctest::Approx(0.0057));
  CHECK(std::round(Inch(w.od_max) * 1e4) / 1e4 == doctest::Approx(0.0063));
  // IEC 60317 0.500 mm: grade 1 max 0.544 mm, grade 2 max 0.566 mm.
  CHECK(Mm(MetricWire(0.5e-3, Insulation::kGrade1)->od_max) == doctest::Approx(0.544));
  CHECK(Mm(MetricWire(0.5e-3, Insulation::kGrade2)->od_max) == doctest::Approx(0.566));
}

TEST_CASE("sizes between table rows get an interpolated build, monotone in diameter") {
  const Wire w26 = *AwgWire(26), w27 = *AwgWire(27), w28 = *AwgWire(28);
  CHECK(w27.od_source == DiameterSource::kInterpolated);
  CHECK(w27.od_nom < w26.od_nom);
  CHECK(w27.od_nom > w28.od_nom);
  const double b26 = w26.od_nom - w26.d_nom, b27 = w27.od_nom - w27.d_nom,
               b28 = w28.od_nom - w28.d_nom;
  CHECK(b27 <= std::max(b26, b28));
  CHECK(b27 >= std::min(b26, b28));
  // Across the whole catalogue: heavier build, bigger wire → bigger overall diameter, and
  // every size has min ≤ nom ≤ max with enamel on it.
  for (Insulation ins : {Insulation::kSingle, Insulation::kHeavy}) {
    double prev = 0;
    for (int n = 40; n >= 18; --n) {
      const Wire w = *AwgWire(n, ins);
      CAPTURE(n);
      CHECK(w.od_nom > prev);
      CHECK(w.od_min > w.d_nom);
      CHECK(w.od_min <= w.od_nom);
      CHECK(w.od_nom <= w.od_max);
      prev = w.od_nom;
    }
  }
  for (int n = 18; n <= 40; ++n) CHECK(AwgWire(n, Insulation::kHeavy)->od_nom > AwgWire(n, Insulation::kSingle)->od_nom);
}

TEST_CASE("wire specs: AWG<n>, <d>mm, optional insulation, bad ones name the text") {
  Result<Wire> w = ParseWire("AWG27");
  REQUIRE(w.ok());
  CHECK(w->awg == 27);
  CHECK(w->insulation == Insulation::kHeavy);
  CHECK(w->Name() == "AWG27");
  w = ParseWire("awg 30:single");
  REQUIRE(w.ok());
  CHECK(w->insulation == Insulation::kSingle);
  w = ParseWire("0.355mm");
  REQUIRE(w.ok());
  CHECK(w->awg == -1);
  CHECK(Mm(w->d_nom) == doctest::Approx(0.355));
  CHECK(w->insulation == Insulation::kGrade1);
  CHECK(w->Name() == "0.355mm");
  CHECK(ParseWire("0.4mm:grade2")->insulation == Insulation::kGrade2);
  CHECK(ParseWire("0.40mm")->Name() == "0.40mm");
  for (const char* bad : {"AWG", "AWG2x", "27", "0.3", "mm", "AWG99", "9mm", "AWG27:thick"}) {
    CAPTURE(bad);
    Result<Wire> r = ParseWire(bad);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message().find(bad) != std::string::npos);
  }
}

TEST_CASE("catalogue: AWG 18–40 and the metric R20 series, sorted by diameter") {
  const std::vector<Wire> all = WireCatalogue();
  CHECK(all.size() == 23 + 21);
  for (size_t i = 1; i < all.size(); ++i) CHECK(all[i].d_nom >= all[i - 1].d_nom);
  CHECK(WireCatalogue({.metric = false}).size() == 23);
}
