// rotorbench acquire: speed readings from tach mark times, as they arrive.
//
// The streaming form of model::TachReadings (the same rules, so a logged run matches a
// simulated one): one reading per mark after the first, (2π/N)/(t_k − t_{k−1}) stamped
// at t_k; a mark after more than stop_timeout without one gives no reading (the shaft
// had stopped); while no mark comes for stop_timeout, a 0 reading every zero_interval.
// SI (s, rad/s). Not thread-safe.
#pragma once

#include <vector>

#include "model/sample.h"

namespace rb::acquire {

struct TachOptions {
  int marks_per_rev = 2;
  double stop_timeout_s = 0.25;   ///< no mark for this long ⇒ the shaft is at rest
  double zero_interval_s = 0.05;  ///< while at rest, a 0 reading this often
};

class TachTracker {
 public:
  /// `t0`: time from which the tracker is responsible (zeros start at t0 if no mark).
  TachTracker(const TachOptions& options, double t0);

  /// A mark at time t (non-decreasing); appends zero readings due before it and, when the
  /// previous mark is recent, its speed reading.
  void Mark(double t, std::vector<model::Sample>* out);
  /// Appends the zero readings due at or before time t.
  void Advance(double t, std::vector<model::Sample>* out);

  /// Latest reading [rad/s] (0 at rest or before any).
  double speed() const { return speed_; }
  /// True once no mark has come for stop_timeout (by the last Advance/Mark time).
  bool at_rest() const { return at_rest_; }
  /// Time of the last mark, or t0 − stop_timeout if none.
  double last_mark() const { return last_; }

 private:
  TachOptions o_;
  double pitch_;
  double last_;
  bool have_last_ = false;
  double next_zero_;
  double speed_ = 0;
  bool at_rest_ = true;
};

}  // namespace rb::acquire
