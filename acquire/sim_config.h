// rotorbench acquire: configuring the simulated rig from a TOML motor file and overrides.
//
// Starts from the demo bench (model/demo.h); a motor file changes any of it, and
// command-line overrides change that again, so a batch of motors with spread is one
// loop over seeds and values. Trade units are read at this edge (keys name their unit:
// resistance_ohm, kv_rpm_per_V, inertia_g_cm2, friction_mN_m, ...) and converted with
// model/units.h. Errors name FILE:LINE and the key. Thread-safe (no shared state).
#pragma once

#include <cstdint>
#include <optional>
#include <string>

#include "acquire/sim_firmware.h"

namespace rb::acquire {

/// Values given on the command line; unset ones leave the file's (or demo) value.
struct SimOverrides {
  std::optional<double> resistance_ohm, kv_rpm_per_V, inertia_g_cm2, friction_mN_m;
  std::optional<double> viscous_N_m_s_per_rad, inductance_mH, brush_drop_V;
  std::optional<double> current_gain_error, current_offset_A, voltage_gain_error;
  std::optional<double> current_noise_A, tach_miss_probability;
  std::optional<int> marks_per_rev, segments;
  std::optional<double> adc_rate_Hz, supply_V, supply_resistance_ohm;
  std::optional<std::uint64_t> seed;
  /// A precision resistor in place of the motor (calibration): R in ohms, shaft held.
  std::optional<double> resistor_ohm;
  std::optional<double> current_limit_A;
};

/// The demo bench, then `motor_file` (if not empty), then `o`.
Result<SimRigOptions> BuildSimRig(const std::string& motor_file, const SimOverrides& o);

/// Checks that the rig can represent its readings (i16 counts) and is physical.
Status ValidateSimRig(const SimRigOptions& rig);

}  // namespace rb::acquire
