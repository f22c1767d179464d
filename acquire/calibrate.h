// rotorbench acquire: the bench checks that calibrate a rig's channels.
//
//   zero:  output off — the mean current reading is the current channel's offset;
//   shunt: a precision resistor in place of the motor, at ≥ 2 output levels — the current
//          the voltage channel implies (V/R) against the current reading gives the current
//          channel's gain and offset (a straight-line fit);
//   tach:  the motor at steady speed against a reference speed (strobe, optical tach) —
//          the ratio is the speed channel's gain.
// Each check stores a calibration record (gain, offset, standard uncertainties, method)
// for the rig's instrument name; record links the newest ones to every run. SI units.
// Not thread-safe.
#pragma once

#include <csignal>
#include <functional>
#include <string>
#include <vector>

#include "acquire/byte_source.h"
#include "acquire/rig_link.h"
#include "storage/storage.h"

namespace rb::acquire {

struct CalibrateOptions {
  std::string check;               ///< "zero", "shunt" or "tach"
  double seconds = 1.0;            ///< averaging time per point [s]
  double ohms = 0;                 ///< shunt: the resistor [Ω]
  double ohms_tolerance = 0.001;   ///< shunt: its tolerance, relative (0.001 = 0.1 %)
  std::vector<double> levels = {0.3, 0.6, 1.0};  ///< shunt: output fractions
  double reference_rpm = 0;        ///< tach: the reference reading [rpm]
  double reference_u = 0.001;      ///< tach: its standard uncertainty, relative
  double level = 1.0;              ///< tach: output fraction
  double current_limit_A = 4.0;    ///< host limit while driving
  std::string notes;
};

struct CalibrateCallbacks {
  std::function<void(const std::string&)> say;
  const volatile std::sig_atomic_t* stop = nullptr;
};

struct CalibrateSummary {
  RigInfo rig;
  std::vector<storage::CalibrationRecord> stored;
};

Status ValidateCalibrateOptions(const CalibrateOptions& o);
Result<CalibrateSummary> Calibrate(storage::Database& db, ByteSource& port, const CalibrateOptions& o,
                                   const CalibrateCallbacks& cb);

}  // namespace rb::acquire
