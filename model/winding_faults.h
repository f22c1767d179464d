// rotorbench model: what a faulty coil does to a ring (e.g. 3-slot delta) armature as
// the brushes see it — the circuit calculation behind the rewind verifier's hints.
//
// Circuit (derived here, docs/design.md §rewind): K coils in a closed ring, coil k
// between commutator segments k and k+1, each a resistance Rc·r_k in series with an EMF
// e_k = s_k·ω·k1·sin(θ + (k+1)·2π/K) — a 2-pole field with the coil in the neutral zone
// (e_k = 0) exactly when a brush shorts it. Brushes at 0 and π touch one segment, or two
// while bridging a gap (model/commutator.h geometry). Nodal analysis gives, at each rotor
// angle, the Thevenin equivalent between the brushes: EMF E(θ), resistance R(θ), and the
// power P(θ) dissipated by currents circulating inside the ring with the terminals open.
// A reversed coil has s_k = −1; an open coil r_k = ∞; a poor joint r_k > 1; a coil with
// fewer turns s_k < 1 and r_k < 1.
//
// What a DC fit of a spinning motor sees (L = 0, constant speed ω, supply V): the mean
// current ī = V·⟨1/R⟩ − ω·⟨E/(ωR)⟩, so
//   R_eff  = 1/⟨1/R⟩,   Ke_eff = ⟨k/R⟩/⟨1/R⟩  with k = E/ω,
// and the mean torque falls short of Ke_eff·ī by ω·b_extra with
//   b_extra = ⟨k²/R⟩ − ⟨k/R⟩²/⟨1/R⟩ + ⟨P/ω²⟩   (≥ 0: a drag that looks like viscous friction).
// All results are normalised: EMF by ω·k1, resistance by Rc, drag by k1²/Rc.
// Checks: a healthy ring reproduces model/commutator.h at every angle; with knife-edge
// brushes a healthy 3-coil ring has Ke_eff = 3/π·k1 (mean of sin over the 60° windows).
// Pure; thread-safe.
#pragma once

#include <vector>

namespace rb::model {

/// One coil of the ring relative to a healthy coil.
struct CoilState {
  double resistance_factor = 1.0;  ///< R / Rc; +infinity = open
  double emf_factor = 1.0;         ///< EMF / healthy EMF; −1 = connected backwards
};

/// The brushes' view at one rotor angle (normalised as above).
struct RingPoint {
  double emf = 0;         ///< E(θ)/(ω·k1), sign: brush at 0 minus brush at π
  double resistance = 0;  ///< R(θ)/Rc; +infinity when no path joins the brushes
  double circulating = 0; ///< P(θ)/(ω²·k1²/Rc) with the terminals open
};

RingPoint RingArmatureAt(const std::vector<CoilState>& coils, double brush_fraction,
                         double theta);

/// The averaged, DC-fit view of a ring armature (normalised as above).
struct RingAverages {
  double resistance = 0;  ///< R_eff/Rc = 1/⟨1/R⟩
  double ke = 0;          ///< Ke_eff/k1 (signed like E)
  double drag = 0;        ///< b_extra/(k1²/Rc)
  double resistance_min = 0, resistance_max = 0;  ///< range of R(θ)/Rc over a turn
};

/// Averages over one revolution with `steps` evenly spaced angles.
RingAverages RingArmatureAverages(const std::vector<CoilState>& coils, double brush_fraction,
                                  int steps = 3600);

/// Ratios faulty/healthy of what a DC fit sees, for one ring armature.
struct FaultSignature {
  double resistance_ratio = 1;  ///< R_eff(faulty)/R_eff(healthy)
  double ke_ratio = 1;          ///< Ke_eff(faulty)/Ke_eff(healthy)
  double drag = 0;              ///< extra viscous drag b_extra·R_eff(healthy)/Ke_eff(healthy)²
                                ///< (dimensionless; multiply by Ke²/R of the healthy motor)
};

FaultSignature RingFaultSignature(int coils, double brush_fraction, int faulty_coil,
                                  const CoilState& fault);

}  // namespace rb::model
