// Test helper: simulated bench runs (model/simulate.h) for the fitter, with the truth.
#pragma once

#include <cstdint>
#include <random>
#include <vector>

#include "fit/fit.h"
#include "model/model.h"

namespace rb::testing {

inline fit::RunData ToRunData(const model::SimulatedRun& s, std::int64_t id) {
  fit::RunData r;
  r.id = id;
  r.kind = s.kind;
  r.nominal_voltage = s.nominal_voltage;
  r.ambient_C = 20.0;
  r.samples = s.samples;
  return r;
}

struct PlanSpec {
  int locked_positions = 6;     ///< evenly over one ripple period (60° on a 3-segment motor)
  double locked_volts = 2.0;
  std::vector<double> spin_volts = {3.0, 6.0};
  std::vector<double> coast_volts = {3.0, 6.0};
  double gain_tolerance = 0.01;  ///< current sensor gain error drawn in ±this (rectangular)
};

/// The standard plan on a bench: locked rotor at several positions, spin-ups at two
/// levels, coast-downs. The current sensor's gain error is drawn within its tolerance and
/// declared as a calibration uncertainty tolerance/√3 (GUM rectangular distribution).
inline std::vector<fit::RunData> StandardPlan(model::BenchModel bench, std::uint64_t seed,
                                              const PlanSpec& spec = {},
                                              double* gain_error = nullptr) {
  std::mt19937_64 rng(seed * 7919 + 11);
  const double g = std::uniform_real_distribution<double>(-spec.gain_tolerance, spec.gain_tolerance)(rng);
  const double phase = std::uniform_real_distribution<double>(0, 1)(rng);
  if (gain_error) *gain_error = g;
  bench.instruments.current.gain_error = g;
  model::Calibration cal;
  cal.current.gain_u = spec.gain_tolerance / std::sqrt(3.0);
  cal.current.offset_u = 2e-3;
  std::vector<fit::RunData> runs;
  std::int64_t id = 1;
  auto add = [&](model::RunKind kind, double volts, double duration, double angle) {
    model::RunScript s;
    s.kind = kind;
    s.volts = volts;
    s.duration_s = duration;
    s.rotor_angle = angle;
    bench.seed = seed * 1000 + static_cast<std::uint64_t>(id);
    auto sim = model::SimulateRun(bench, s);
    if (!sim.ok()) return;
    fit::RunData r = ToRunData(*sim, id++);
    r.calibration = cal;
    r.marks_per_rev = bench.instruments.tach.marks_per_rev;
    runs.push_back(std::move(r));
  };
  const int ripples = bench.commutator.segments >= 2 ? model::RipplesPerRevolution(bench.commutator.segments) : 1;
  const double period = 2 * units::kPi / ripples;
  for (int k = 0; k < spec.locked_positions; ++k) {
    add(model::RunKind::kLocked, spec.locked_volts, 0.1, (k + phase) * period / spec.locked_positions);
  }
  for (double v : spec.spin_volts) add(model::RunKind::kSpinUp, v, 0.6, 0);
  for (double v : spec.coast_volts) add(model::RunKind::kCoastDown, v, 20.0, 0);
  return runs;
}

}  // namespace rb::testing
