// rotorbench model: one timestamped reading of the bench instruments, in SI.
//
// Instruments report at their own moments, so a sample carries the channels that had a
// new reading and NaN in the others ("no reading", never zero). Time is seconds from
// the start of the run. Plain value type; thread-safe.
#pragma once

#include <cmath>
#include <vector>

namespace rb::model {

struct Sample {
  double t = 0;          ///< seconds since the run started
  double speed = NAN;    ///< shaft speed [rad/s]; NaN = no reading at this time
  double current = NAN;  ///< armature current [A]
  double voltage = NAN;  ///< terminal voltage [V]
};

inline bool HasSpeed(const Sample& s) { return !std::isnan(s.speed); }
inline bool HasCurrent(const Sample& s) { return !std::isnan(s.current); }
inline bool HasVoltage(const Sample& s) { return !std::isnan(s.voltage); }

using Samples = std::vector<Sample>;

}  // namespace rb::model
