// rotorbench model: instrument calibration as applied to raw readings.
//
// A channel's calibrated reading is gain·(raw − offset). The uncertainties of gain
// (relative, 1σ) and offset (SI, 1σ) are carried to the fitter's uncertainty budget.
// Raw samples stay stored; calibration is applied when runs are read for fitting, so a
// later calibration can be re-applied. Pure; thread-safe.
#pragma once

#include <vector>

#include "model/sample.h"

namespace rb::model {

struct ChannelCalibration {
  double gain = 1.0;      ///< multiply (raw − offset) by this
  double gain_u = 0.0;    ///< standard uncertainty of gain, relative (0.005 = 0.5 %)
  double offset = 0.0;    ///< subtract from the raw reading [SI]
  double offset_u = 0.0;  ///< standard uncertainty of offset [SI]

  double Apply(double raw) const { return gain * (raw - offset); }
};

struct Calibration {
  ChannelCalibration speed, current, voltage;
};

inline Sample ApplyCalibration(const Calibration& c, const Sample& raw) {
  Sample s = raw;
  if (HasSpeed(raw)) s.speed = c.speed.Apply(raw.speed);
  if (HasCurrent(raw)) s.current = c.current.Apply(raw.current);
  if (HasVoltage(raw)) s.voltage = c.voltage.Apply(raw.voltage);
  return s;
}

inline void ApplyCalibration(const Calibration& c, std::vector<Sample>* samples) {
  for (Sample& s : *samples) s = ApplyCalibration(c, s);
}

}  // namespace rb::model
