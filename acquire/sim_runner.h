// rotorbench acquire: the simulated rig as a process on real pseudo-terminals.
//
// RunSimulator opens a PTY (posix_openpt), makes the link path a symlink to its slave,
// and runs SimFirmware paced in real time (a PTY ignores baud rate) until told to stop:
// host bytes in, frames out. Optional extra PTYs carry plain-text instruments (a tach
// printing "T <rpm> rpm" lines, a meter printing "I <A> A V <V> V") fed by the same
// simulated bench. A vanish fault closes the PTY and removes the link like an unplugged
// cable; the rig comes back (reset) on a new PTY behind the same link.
// Call from one thread; it blocks.
#pragma once

#include <csignal>
#include <functional>
#include <string>

#include "acquire/sim_firmware.h"

namespace rb::acquire {

struct SimRunnerOptions {
  std::string link;        ///< symlink to the rig-protocol PTY (empty: no rig port)
  std::string tach_link;   ///< symlink to a text tach PTY (optional)
  std::string meter_link;  ///< symlink to a text current/voltage meter PTY (optional)
  double text_rate_hz = 20;
  std::string emission_log;  ///< CSV of every frame and record built (tests, benchmarks)
  double max_seconds = 0;    ///< stop by itself after this long (0 = until stopped)
  double vanish_at_s = -1;   ///< scheduled unplug (seconds after start; < 0 = never)
  double vanish_for_s = 1.0; ///< ... and how long the cable stays out (0 = for good)
  double stall_at_s = -1;    ///< scheduled stall
  double stall_for_s = 0.5;
};

/// Runs until *stop is set (by a signal handler) or max_seconds pass. `say` receives a
/// line each time a link is (re)created or removed.
Status RunSimulator(const SimRigOptions& rig, const SimRunnerOptions& run,
                    const volatile std::sig_atomic_t* stop,
                    const std::function<void(const std::string&)>& say);

}  // namespace rb::acquire
