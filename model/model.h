// rotorbench model: the motor's physics — start here.
//
// Pure functions and value types over SI doubles; no I/O, clocks or globals. Other
// modules include this header only:
//   params.h       the parameter set (R, L, Ke = Kt, J, Tc, b, Vb), loads, run kinds
//   units.h        trade units (rpm, rpm/V, mN·m, g·cm², mΩ) ↔ SI, in one place
//   dynamics.h     the ODE, templated for automatic differentiation
//   closed_form.h  steady state, time constants, coast-down, stall
//   characteristics.h  curves, max power/efficiency, and their uncertainty
//   commutator.h   brush-to-brush resistance vs rotor angle, ripple count
//   copper.h       IEC 60028 copper constants and temperature correction
//   calibration.h  gain/offset of instrument channels, applied to raw readings
//   sample.h       one timestamped instrument reading
//   simulate.h     a bench simulator with realistic instruments
//   demo.h         the invented demo motor and bench
//   wire.h         magnet wire: AWG/metric sizes, enamel build, resistance per length
//   winding.h      an armature winding (coils, turns, wire) and its mean turn length
//   winding_faults.h  open/reversed/poor coils of a ring armature as the brushes see them
// Thread-safety: everything is safe to call concurrently except a shared BenchSimulator.
#pragma once

#include "model/calibration.h"
#include "model/characteristics.h"
#include "model/closed_form.h"
#include "model/commutator.h"
#include "model/copper.h"
#include "model/demo.h"
#include "model/dynamics.h"
#include "model/params.h"
#include "model/sample.h"
#include "model/simulate.h"
#include "model/units.h"
#include "model/winding.h"
#include "model/winding_faults.h"
#include "model/wire.h"
