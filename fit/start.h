// rotorbench fit (internal): start values from closed forms, and what the data supports.
//
// No user guesses: each constant is first estimated from the simplest relation that holds
// in some stretch of the data (model/closed_form.h, domain notes §1.1–1.2):
//   locked rotor      R_k = (V − Vb)/I on the plateau of pulse k; the pulses at different
//                     rotor positions are averaged
//   driven, turning   V − Vb = R·i + Ke·ω, a linear regression over all driven samples
//   open circuit      Ke = V/ω (the coast-down is a generator test)
//   spin-up           τm from the 63 % rise time, J = τm·(Ke²/R + b)
//   steady states     Kt·I0 = Tc + b·ω0 (two speeds separate Tc from b)
//   coast-down        dω/dt = −Tc/J − (b/J)·ω (a regression of the deceleration on speed)
// It also decides what the data can support: R needs a current that changes (a locked
// rotor or a spin-up), Vb two voltage levels, L a resolved current rise, the heating term
// a resistance that visibly rises during locked pulses. SI units. Pure; thread-safe.
#pragma once

#include <string>
#include <vector>

#include "fit/prep.h"
#include "model/params.h"

namespace rb::fit::internal {

struct RunStart {
  double t_on = NAN;     ///< switch-on time (spin-up, locked)
  double w0 = NAN;       ///< speed at the start of the modelled stretch
  double i_offset = 0;   ///< current-sensor offset seen in open-circuit samples
  bool offset_free = false;  ///< enough open-circuit current samples to estimate it
  double r_locked = NAN;     ///< locked rotor: (V − Vb)/I on the plateau
  double v_level = NAN;      ///< typical driven terminal voltage
  double r_drift = 0;        ///< locked: relative resistance rise over the pulse
  double r_drift_se = 0;
  double rise_tau = NAN;     ///< locked: current rise time constant, if resolved
};

struct StartValues {
  model::MotorParams p;  ///< start values (R is the position-averaged resistance)
  std::vector<RunStart> runs;
  bool r_supported = false;     ///< a locked rotor or a spin-up with current and voltage
  bool ke_supported = false;    ///< voltage and speed logged while turning
  int voltage_levels = 0;       ///< distinct driven voltage levels with current logged
  bool l_resolved = false;      ///< some switch-on transient resolves L/R
  bool heating_seen = false;    ///< locked pulses show the winding warming
  double inv_heat_capacity = 0;  ///< start for the heating term [1/(J/K)]
  int locked_positions = 0;     ///< locked runs with a usable plateau
  double locked_mean = NAN;     ///< arithmetic mean of R_k
  /// Rotating resistance / position-averaged resistance: between the harmonic/arithmetic
  /// mean ratio of the locked readings and 1 (see start.cpp); 1 with fewer than 3
  /// positions. And its standard uncertainty.
  double kappa = 1.0, kappa_u = 0.0;
  /// Relative spread of R_k over rotor positions (1σ), pooled with a prior.
  double position_spread = 0.08;
  std::vector<std::string> notes;  ///< how the start values were obtained
};

StartValues EstimateStart(const std::vector<PreparedRun>& runs, bool want_brush);

/// Speed at time t from the readings (linear interpolation of window mid-times).
double SpeedAt(const PreparedRun& r, double t);

}  // namespace rb::fit::internal
