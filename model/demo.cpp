#include "model/demo.h"

namespace rb::model {

MotorParams DemoMotor() {
  MotorParams p;
  p.R = 1.8;
  p.L = 0.35e-3;
  p.Ke = 6.2e-3;
  p.J = 1.6e-6;
  p.Tc = 0.4e-3;
  p.b = 2e-7;
  p.Vb = 0.15;
  return p;
}

BenchModel DemoBench(std::uint64_t seed) {
  BenchModel m;
  m.motor = DemoMotor();
  m.seed = seed;
  m.commutator = {.segments = 3, .brush_fraction = 0.2};
  m.supply.internal_resistance_ohm = 0.08;
  InstrumentModel& ins = m.instruments;
  ins.tach = {.marks_per_rev = 2,
              .timer_resolution_s = 1e-6,
              .miss_probability = 0.001,
              .stop_timeout_s = 0.25,
              .zero_interval_s = 0.05};
  ins.adc_rate_hz = 2000;
  ins.current = {.lsb = 1e-3, .offset = 2e-3, .gain_error = 0.0, .noise_sd = 4e-3,
                 .full_scale = 10.0};
  ins.voltage = {.lsb = 5e-3, .offset = 0.0, .gain_error = 0.0, .noise_sd = 5e-3,
                 .full_scale = 30.0};
  return m;
}

}  // namespace rb::model
