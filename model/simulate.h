// rotorbench model: a bench simulator that reports what real instruments would.
//
// BenchSimulator integrates the motor (with commutator-dependent resistance, supply
// internal resistance, optional winding heating and a shaft load) and emits what a rig
// sees: tach mark timestamps quantised to a timer and sometimes missed, and ADC samples
// of current and terminal voltage with offset, gain error, noise, quantisation and
// occasional spikes. SimulateRun() turns that into the Samples of one run. Everything is
// seeded and reproducible. SI units. A BenchSimulator is not thread-safe; use one per
// thread. Free functions are pure.
#pragma once

#include <cstdint>
#include <random>
#include <vector>

#include "base/status.h"
#include "model/dynamics.h"
#include "model/params.h"
#include "model/sample.h"

namespace rb::model {

/// An optical or Hall tach that timestamps marks on the shaft.
struct TachModel {
  int marks_per_rev = 2;             ///< marks (or magnet poles) per revolution
  double timer_resolution_s = 1e-6;  ///< mark timestamps are multiples of this
  double miss_probability = 0.0;     ///< chance that one mark is not registered
  double stop_timeout_s = 0.25;      ///< no mark for this long ⇒ report 0 rpm
  double zero_interval_s = 0.05;     ///< while stopped, a 0 reading this often
};

/// One ADC channel: reading = quantise(true·(1 + gain_error) + offset + noise).
struct AdcChannelModel {
  double lsb = 1e-3;              ///< SI value of one count
  double offset = 0.0;            ///< additive error [SI]
  double gain_error = 0.0;        ///< fractional gain error (0.01 = reads 1 % high)
  double noise_sd = 0.0;          ///< white noise before quantisation [SI]
  double full_scale = 30.0;       ///< readings clip at ±full_scale [SI]
  double spike_probability = 0;   ///< chance per sample of an interference spike
  double spike_size = 0;          ///< size of a spike [SI]
};

struct InstrumentModel {
  TachModel tach;
  double adc_rate_hz = 2000;  ///< current and voltage are sampled together at this rate
  AdcChannelModel current{.lsb = 1e-3, .full_scale = 20.0};
  AdcChannelModel voltage{.lsb = 5e-3, .full_scale = 40.0};
};

/// Resistance varies with rotor angle as the brushes bridge segments (model/commutator.h).
struct CommutatorModel {
  int segments = 3;             ///< 0 = ignore the commutator (constant R)
  double brush_fraction = 0.2;  ///< brush width / segment pitch
};

struct SupplyModel {
  double internal_resistance_ohm = 0.05;  ///< source resistance incl. leads and switch
};

/// First-order winding heating; disabled when heat_capacity is 0.
struct ThermalModel {
  double heat_capacity_J_per_K = 0.0;
  double thermal_resistance_K_per_W = 20.0;
  double start_temperature_C = 20.0;  ///< winding (and ambient) temperature at t = 0
};

/// Everything about the simulated bench. motor.R is the resistance at the start
/// temperature, averaged over rotor position.
struct BenchModel {
  MotorParams motor;
  Load load;
  CommutatorModel commutator;
  SupplyModel supply;
  ThermalModel thermal;
  InstrumentModel instruments;
  double step_s = 10e-6;  ///< integration step while the electrical transient matters
  std::uint64_t seed = 1;
};

/// The simulator's true state (for tests and plots; instruments never see it directly).
struct TrueState {
  double t = 0;
  double i = 0, w = 0, theta = 0;
  double temperature_C = 20;
  double v_terminal = 0;
};

/// One ADC conversion: counts of both channels (value = counts · lsb).
struct AdcSample {
  double t;
  std::int32_t current_counts;
  std::int32_t voltage_counts;
};

/// What the instruments produced while the simulator advanced.
struct Observations {
  std::vector<double> tach_marks;  ///< registered mark times [s], quantised
  std::vector<AdcSample> adc;
  bool record_truth = false;       ///< also keep the true state at each ADC sample
  std::vector<TrueState> truth;
};

class BenchSimulator {
 public:
  explicit BenchSimulator(const BenchModel& model);

  /// Source voltage before the supply's internal resistance (a PWM average is fine).
  void SetSupplyVolts(double v) { supply_v_ = v; }
  void SetDrive(Drive d);
  /// Places the rotor (only meaningful at rest, e.g. between locked-rotor pulses).
  void SetRotorAngle(double theta) { x_.theta = theta; }
  /// Jumps to a speed (and the matching quasi-steady current when connected).
  void SetSpeed(double w);
  /// Advances the true state to time t, appending instrument outputs to *out.
  void AdvanceTo(double t, Observations* out);

  const TrueState& truth() const { return x_; }
  Drive drive() const { return drive_; }
  double supply_volts() const { return supply_v_; }
  const BenchModel& model() const { return model_; }

 private:
  void Step(double dt, Observations* out);
  double ResistanceAt(double theta, double temperature_C) const;
  double SampleAdc(const AdcChannelModel& ch, double value);

  BenchModel model_;
  Drive drive_ = Drive::kOpenCircuit;
  double supply_v_ = 0;
  TrueState x_;
  double mean_factor_ = 1.0;
  double next_mark_angle_ = 0;  // absolute rotor angle of the next tach mark
  double next_adc_t_ = 0;
  std::mt19937_64 rng_;
};

/// Period-measuring tach: one speed reading at each registered mark after the first,
/// (2π/N)/(t_k − t_{k−1}), stamped at t_k (the reading averages the last period). A
/// missed mark thus yields one reading at half the true speed. While no mark arrives for
/// stop_timeout_s the tach reports 0 every zero_interval_s. Times within [t0, t1].
std::vector<Sample> TachReadings(const std::vector<double>& marks, const TachModel& tach,
                                 double t0, double t1);

/// Converts ADC counts to SI samples with the nominal (uncalibrated) scales.
std::vector<Sample> AdcReadings(const std::vector<AdcSample>& adc, const InstrumentModel& ins);

/// Merges readings from several instruments into one time-ordered sample list; readings
/// at the same time stamp are combined into one sample.
std::vector<Sample> MergeReadings(std::vector<Sample> a, std::vector<Sample> b);

/// What to do in one simulated run.
struct RunScript {
  RunKind kind = RunKind::kSpinUp;
  double volts = 6.0;       ///< supply during the run (before a coast-down: the spin speed)
  double pre_s = 0.05;      ///< logging before the step (output on, or circuit opened)
  double duration_s = 1.0;  ///< logging after the step; coast-down: upper limit
  double rotor_angle = 0;   ///< locked rotor: shaft position [rad]
};

struct SimulatedRun {
  RunKind kind = RunKind::kSpinUp;
  double nominal_voltage = 0;  ///< the supply setting
  double step_time_s = 0;      ///< when the output switched (true, not measured)
  std::vector<Sample> samples;
  std::vector<TrueState> truth;  ///< true state at every ADC sample time
};

/// Simulates one run from a fresh BenchSimulator (seeded from model.seed). Spin-up and
/// loaded runs start at rest; coast-down and steady runs first settle at `volts`
/// (unlogged); locked runs hold the shaft at rotor_angle. Generator and free runs need
/// an external drive and are refused.
Result<SimulatedRun> SimulateRun(const BenchModel& model, const RunScript& script);

}  // namespace rb::model
