// rotorbench acquire: the technician's recording flow (`rotorbench record`).
//
// Record() identifies the rig, runs a test plan and stores each step as a run:
//   standard: optional locked-rotor pulses (≥ 2 output levels × several rotor positions,
//             only when the user confirms the shaft is held), then for each output level a
//             spin-up from rest, a steady hold and an open-circuit coast-down to a stop;
//   quick:    one spin-up and one coast-down.
// Steps end on measured conditions (steady speed, steady current, stopped) with timeouts.
// Host-side limits (current, locked-rotor time) stop the output and are recorded as
// events; the rig's own limits stay in force too. A stop request switches the output off
// first, then closes the open run as interrupted, keeping every sample. Samples are raw
// SI with the rig's scales; run times start at the step's first sample; the moment the
// output switched is an event ("output_on"/"output_off") with the rig's own time stamp.
// Not thread-safe; the callbacks are called from the calling thread.
#pragma once

#include <csignal>
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "acquire/byte_source.h"
#include "acquire/rig_link.h"
#include "model/params.h"
#include "storage/storage.h"

namespace rb::acquire {

struct RecordOptions {
  std::string motor_label;
  std::string plan = "standard";  ///< "standard" or "quick"
  bool assume_yes = false;        ///< no prompts (steps needing hands are skipped ...)
  bool shaft_held = false;        ///< ... unless the user confirms the shaft is held
  bool skip_locked = false;       ///< leave out the locked-rotor pulses
  std::vector<double> levels = {0.5, 1.0};          ///< spin-up output fractions (standard)
  std::vector<double> locked_levels = {0.15, 0.3};  ///< locked-rotor output fractions
  int locked_positions = 3;       ///< rotor positions for the locked pulses
  double current_limit_A = 4.0;   ///< host-side limit: output off after 3 readings above it
  double max_locked_s = 0.5;      ///< longest locked-rotor pulse [s]
  double locked_min_s = 0.1;      ///< a locked pulse lasts at least this long [s]
  double cool_factor = 4.0;       ///< rest between locked pulses = factor × pulse time
  double pre_s = 0.1;             ///< logging before each switch [s]
  double steady_hold_s = 0.5;     ///< length of a steady run [s]
  double steady_tolerance = 0.005;  ///< relative change of median speed between 0.1 s windows
  double stop_tail_s = 0.1;       ///< logging after the shaft is found at rest [s]
  double spinup_timeout_s = 10, coast_timeout_s = 60, rest_timeout_s = 30;
  std::optional<double> supply_volts;  ///< what 100 % output applies [V]; default: the rig's
  std::string supply_note, ambient_note;
  std::optional<double> ambient_C;
  double tach_stop_timeout_s = 0.25;  ///< no mark for this long ⇒ at rest (speed 0)
};

Status ValidateRecordOptions(const RecordOptions& o);

/// What the live line shows.
struct LiveStatus {
  std::string step;
  double rpm = 0, amps = 0, volts = 0, samples_per_s = 0;
  std::uint64_t frames_lost = 0, bad_frames = 0;
};

struct RecordCallbacks {
  /// Asks the user (prints the question, waits for yes/no). Not called with assume_yes.
  std::function<bool(const std::string& question)> confirm;
  std::function<void(const std::string& line)> say;
  std::function<void(const LiveStatus&)> live;  ///< a few times per second
  const volatile std::sig_atomic_t* stop = nullptr;  ///< set by SIGINT/SIGTERM
};

struct RecordedRun {
  std::int64_t id = 0;
  std::string step;
  model::RunKind kind = model::RunKind::kSpinUp;
  std::size_t samples = 0;
  double duration_s = 0;
  std::string end_reason;
};

struct RecordSummary {
  RigInfo rig;
  std::vector<RecordedRun> runs;
  std::vector<std::string> skipped;  ///< steps left out, with why
  DecoderCounters counters;
  std::string stopped;  ///< why the plan stopped early (limit, shaft turned), or empty
  bool interrupted = false;
};

Result<RecordSummary> Record(storage::Database& db, ByteSource& port, const RecordOptions& options,
                             const RecordCallbacks& callbacks);

}  // namespace rb::acquire
