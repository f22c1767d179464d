// Windings: spec parsing, mean turn length, coil and brush-to-brush resistance from first
// principles, and the ring-armature circuit behind the fault hints.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <numbers>

#include "model/commutator.h"
#include "model/units.h"
#include "model/winding.h"
#include "model/winding_faults.h"

using namespace rb::model;
using rb::Result;
namespace units = rb::units;

TEST_CASE("winding specs: TURNSxWIRE and TURNSxSTRANDSxWIRE") {
  Result<Winding> w = ParseWinding("60xAWG30");
  REQUIRE(w.ok());
  CHECK(w->turns == 60);
  CHECK(w->strands == 1);
  CHECK(w->coils == 3);
  CHECK(w->wire.awg == 30);
  CHECK(w->Spec() == "60xAWG30");
  w = ParseWinding("36x2xAWG27", 5);
  REQUIRE(w.ok());
  CHECK(w->strands == 2);
  CHECK(w->coils == 5);
  CHECK(w->Spec() == "36x2xAWG27");
  w = ParseWinding("48x0.3mm:grade2");
  REQUIRE(w.ok());
  CHECK(w->wire.insulation == Insulation::kGrade2);
  for (const char* bad : {"AWG30", "x AWG30", "0xAWG30", "60xAWG", "60x", "60xx", "sixtyxAWG30"}) {
    CAPTURE(bad);
    Result<Winding> r = ParseWinding(bad);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message().find(bad) != std::string::npos);
  }
}

TEST_CASE("mean turn length 2(a + b) + π·c: a = 20, b = 4, c = 3 mm gives 57.42 mm") {
  // Check value recomputed in domain.md §3.2.
  CHECK(units::MetreToMm(MeanTurnLength(20e-3, 4e-3, 3e-3)) == doctest::Approx(57.42).epsilon(1e-4));
}

TEST_CASE("coil resistance from first principles equals the NEMA table value × wire length") {
  // 60 turns of AWG 30 on a 57.42 mm mean turn: 3.4452 m of wire at 103.7 Ω/1000 ft
  // (NEMA MW 1000 bare copper nominal, domain.md §2.1).
  const Winding w = *ParseWinding("60xAWG30");
  const double mlt = MeanTurnLength(20e-3, 4e-3, 3e-3);
  const double expected = units::OhmPer1000FtToOhmPerMetre(103.7) * 60 * mlt;
  CHECK(w.CoilResistance20(mlt) == doctest::Approx(expected).epsilon(6e-4));
  // Two strands in hand halve it.
  CHECK(ParseWinding("60x2xAWG30")->CoilResistance20(mlt) == doctest::Approx(expected / 2).epsilon(6e-4));
  // 3-coil ring, knife-edge brushes: Rc ∥ 2Rc = 2/3·Rc (domain.md §3.3).
  CHECK(BrushToBrushResistance(3, 1.0, 0.0) == doctest::Approx(2.0 / 3.0));
}

TEST_CASE("scaling laws at fixed geometry: R ∝ turns / area, copper area ∝ turns × area") {
  const double mlt = 0.05;
  const Winding a = *ParseWinding("60xAWG30");
  const Winding b = *ParseWinding("120xAWG30");
  const Winding c = *ParseWinding("60xAWG27");
  CHECK(b.CoilResistance20(mlt) / a.CoilResistance20(mlt) == doctest::Approx(2.0));
  CHECK(c.CoilResistance20(mlt) / a.CoilResistance20(mlt) ==
        doctest::Approx(a.wire.Area() / c.wire.Area()));
  // Three gauges thicker ≈ twice the area (domain.md §2.1: 92^(6/39) = 2.005 for exact sizes).
  CHECK(AwgExactDiameter(27) * AwgExactDiameter(27) / (AwgExactDiameter(30) * AwgExactDiameter(30)) ==
        doctest::Approx(2.005).epsilon(1e-3));
  CHECK(b.CopperArea() == doctest::Approx(2 * a.CopperArea()));
}

TEST_CASE("ring circuit, healthy: brush-to-brush resistance equals model/commutator at every angle") {
  for (int k : {3, 5, 7}) {
    const std::vector<CoilState> ring(static_cast<size_t>(k));
    for (double beta : {0.0, 0.2, 0.35}) {
      for (int s = 0; s < 720; ++s) {
        const double theta = (s + 0.25) * 2 * std::numbers::pi / 720;
        CAPTURE(k);
        CAPTURE(beta);
        CAPTURE(theta);
        const RingPoint p = RingArmatureAt(ring, beta, theta);
        REQUIRE(p.resistance == doctest::Approx(BrushResistanceFactor(k, beta, theta)).epsilon(1e-9));
      }
    }
  }
}

TEST_CASE("ring circuit, healthy 3-coil with knife-edge brushes: rectified sine, Ke = 3/π·k1") {
  // The coil joining the brushes carries sin over a 60° window around its peak; the mean
  // of sin over [60°, 120°] is 3/π (closed form). No current circulates in a balanced ring.
  const std::vector<CoilState> ring(3);
  double min_e = 1e9;
  for (int s = 0; s < 3600; ++s) {
    const RingPoint p = RingArmatureAt(ring, 0.0, (s + 0.5) * 2 * std::numbers::pi / 3600);
    min_e = std::min(min_e, std::fabs(p.emf));
    CHECK(p.circulating == doctest::Approx(0.0).scale(1.0));
  }
  CHECK(min_e == doctest::Approx(std::sin(std::numbers::pi / 3)).epsilon(1e-3));
  const RingAverages a = RingArmatureAverages(ring, 0.0);
  CHECK(std::fabs(a.ke) == doctest::Approx(3.0 / std::numbers::pi).epsilon(1e-5));
  CHECK(a.resistance == doctest::Approx(2.0 / 3.0));
}

TEST_CASE("ring circuit, one coil open (3 coils, knife-edge): R is 2·Rc or Rc by position") {
  // Circuit derivation: with coil 0 open, when coil 0 is the direct path between the
  // brushes the current takes the other two coils in series (2·Rc); otherwise the direct
  // coil alone carries it (Rc) — 1/3 and 2/3 of a revolution. A spinning motor's mean
  // current sees 1/⟨1/R⟩ = 1/(1/3·1/2 + 2/3·1) = 1.2·Rc, i.e. 1.8 × the healthy 2/3·Rc.
  // The brush EMF is unchanged (the open coil's EMF equals the other two's sum), so
  // Ke stays.
  std::vector<CoilState> ring(3);
  ring[0].resistance_factor = std::numeric_limits<double>::infinity();
  int at_two = 0, at_one = 0;
  const int n = 3600;
  for (int s = 0; s < n; ++s) {
    const double r = RingArmatureAt(ring, 0.0, (s + 0.5) * 2 * std::numbers::pi / n).resistance;
    if (std::fabs(r - 2.0) < 1e-9) ++at_two;
    if (std::fabs(r - 1.0) < 1e-9) ++at_one;
  }
  CHECK(at_two + at_one == n);
  CHECK(static_cast<double>(at_two) / n == doctest::Approx(1.0 / 3.0).epsilon(1e-3));
  const FaultSignature sig = RingFaultSignature(3, 0.0, 0, ring[0]);
  CHECK(sig.resistance_ratio == doctest::Approx(1.8).epsilon(1e-6));
  CHECK(sig.ke_ratio == doctest::Approx(1.0).epsilon(1e-6));
  // Only the (small) ripple drag changes, and it falls with the mean conductance.
  CHECK(std::fabs(sig.drag) < 0.01);
}

TEST_CASE("ring circuit, one coil reversed (3 coils, knife-edge): circulating loss 2/3·k1²ω²/Rc") {
  // Circuit derivation: reversing coil 0 leaves a net EMF −2·e0 around the ring, which
  // drives 2·e0/(3Rc) through all three coils whatever the brushes touch: loss
  // 3Rc·(2e0/3Rc)² = (4/3)·e0²/Rc, mean (4/3)·(1/2) = 2/3 with e0 = sin θ.
  // While coil 0 is the direct path, E = (−e0/Rc + e0/(2Rc))/(3/(2Rc)) = −e0/3.
  std::vector<CoilState> ring(3);
  ring[0].emf_factor = -1.0;
  double circ = 0;
  const int n = 3600;
  for (int s = 0; s < n; ++s) circ += RingArmatureAt(ring, 0.0, (s + 0.5) * 2 * std::numbers::pi / n).circulating;
  CHECK(circ / n == doctest::Approx(2.0 / 3.0).epsilon(1e-6));
  // Coil 0 joins segments 0 and 1; it is the direct path when the brush at 0 is on
  // segment 0 and the brush at π on segment 1 (segment j spans
  // [θ + j·2π/3, θ + (j+1)·2π/3)), i.e. for −π/3 < θ ≤ 0.
  const double theta = -std::numbers::pi / 6 + 0.1;
  const std::vector<CoilState> healthy(3);
  const RingPoint h = RingArmatureAt(healthy, 0.0, theta);
  const RingPoint f = RingArmatureAt(ring, 0.0, theta);
  CHECK(f.emf == doctest::Approx(-h.emf / 3.0).epsilon(1e-9));
  CHECK(f.resistance == doctest::Approx(2.0 / 3.0));
  const FaultSignature sig = RingFaultSignature(3, 0.0, 0, ring[0]);
  // Averaged: the reversed coil's window gives −1/3 of its EMF and the other two windows
  // 2/3 of theirs (the reversed coil's EMF there averages −1/2 of the direct coil's,
  // times 2/3), so Ke_eff = (−1/3 + 2/3 + 2/3)/3 = 1/3 of healthy; R is unchanged.
  CHECK(sig.ke_ratio == doctest::Approx(1.0 / 3.0).epsilon(1e-3));
  CHECK(sig.resistance_ratio == doctest::Approx(1.0).epsilon(1e-9));
  CHECK(sig.drag > 0.5);
}
