// rotorbench model: the invented demo motor and bench used by the demo and examples.
//
// A small 6 V permanent-magnet motor with a 3-segment commutator and carbon brushes,
// on a bench with a 2-mark optical tach and a 2 kHz current/voltage ADC. The numbers are
// made up to be typical of the class; they describe no real product. Pure; thread-safe.
#pragma once

#include <cstdint>

#include "model/simulate.h"

namespace rb::model {

/// R 1.8 Ω, L 0.35 mH, Ke 6.2 mV·s/rad (Kv ≈ 1540 rpm/V), J 16 g·cm², Tc 0.4 mN·m,
/// b 0.2 µN·m·s/rad, Vb 0.15 V.
MotorParams DemoMotor();

/// The demo motor on a bench with realistic instrument imperfections.
BenchModel DemoBench(std::uint64_t seed = 1);

}  // namespace rb::model
