// rotorbench fit (internal): runs turned into what the cost functions compare.
//
// PrepareRun() validates one run's samples and works out, from events when the rig logged
// them and from the data otherwise, when the output switched; it then builds the
// observation lists:
//   * speed: every non-zero tach reading with the window it averages over. A period tach
//     reports pitch/(t_k − t_prev) at mark k, i.e. the mean speed over [t_prev, t_k], so
//     the model is compared over the same window (θ(t_k) − θ(t_prev))/(t_k − t_prev); a
//     zero reading only means "no mark within the tach's timeout" and is not used;
//   * current and voltage: ADC samples, averaged in short bins of consecutive samples in
//     the same drive state (docs/design.md, "fit — the motor fitter": bins are shorter than 1/20 of the
//     mechanical time constant and never straddle a switch; averaging also smooths the
//     commutator ripple, which is far larger than the instrument noise).
// SI units. Pure functions; thread-safe.
#pragma once

#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "base/status.h"
#include "fit/fit.h"

namespace rb::fit::internal {

struct SpeedObs {
  double t = 0;   ///< reading time (end of the averaging window)
  double y = 0;   ///< reading [rad/s]
  double ta = NAN;  ///< start of the averaging window; NaN = instantaneous reading
};

/// A current/voltage observation: one ADC sample or the mean of a short bin of them.
struct AdcObs {
  double t = 0;
  double i = NAN;  ///< current [A]
  double v = NAN;  ///< terminal voltage [V]
  int n = 1;       ///< samples averaged
  bool connected = false;  ///< circuit closed (driven) at t
  bool transient = false;  ///< inside an electrical switching transient
};

struct PreparedRun {
  std::int64_t id = 0;
  model::RunKind kind = model::RunKind::kSpinUp;
  double nominal_voltage = NAN;
  double ambient_C = NAN;
  bool has_speed = false, has_current = false, has_voltage = false;
  double t_first = 0, t_last = 0;
  /// Switch-on bracket: the output closed at some time in [on_lo, on_hi] (equal when an
  /// event gave the time). NaN when the run has no switch-on.
  double on_lo = NAN, on_hi = NAN;
  /// Switch-off time (coast-down cut, end of a locked pulse); NaN = none.
  double off = NAN;
  bool on_from_event = false, off_from_event = false;
  std::vector<SpeedObs> speed;
  std::vector<AdcObs> adc;
  std::size_t raw_speed = 0, raw_current = 0, raw_voltage = 0;  ///< readings in the run
  std::size_t zero_speed = 0;          ///< zero tach readings (not used)
  bool period_tach = false;            ///< readings average over the mark period
  double pitch = NAN;                  ///< tach mark pitch [rad] when known
  double sigma_speed = NAN, sigma_current = NAN, sigma_voltage = NAN;  ///< first guesses
  double adc_dt = NAN;                 ///< median ADC sample interval [s]
  /// Samples of the electrical switch-on transient (the current still rising), counted
  /// between 10 % and 90 % of its settled value: ≥ 3 means L/R is resolved.
  int rise_samples = 0;
  double rise_end = NAN;  ///< time the switch-on transient is over
  model::Calibration calibration;
  bool calibration_declared = false;
};

struct PrepOptions {
  /// Bin length for dense ADC samples [s]; 0 = no averaging.
  double bin_seconds = 0.0;
  /// Keep this long after a switch unbinned (electrical transient) [s].
  double guard_seconds = 0.0;
};

/// Validates and prepares one run (errors name the run and the sample).
Result<PreparedRun> PrepareRun(const RunData& run);

/// Whether the circuit is closed (driven) at time t, from the run's switch times.
bool ConnectedAt(const PreparedRun& p, double t);

/// (Re)builds the ADC observation list with the given binning.
void BinAdc(const RunData& run, const PrepOptions& options, PreparedRun* p);

/// Robust scale of a series: 1.4826·MAD about the median.
double RobustScale(std::vector<double> v);

/// Scale from the 10–90 % range, (Q90 − Q10)/2.563 (= σ for a normal distribution). Unlike
/// the MAD it is not fooled by two-level residuals such as commutator ripple, where a
/// minority level would otherwise look like outliers.
double RangeScale(std::vector<double> v);

/// Noise of a sampled series from second differences (removes smooth trends).
double NoiseFromSecondDifferences(const std::vector<double>& v);

}  // namespace rb::fit::internal
