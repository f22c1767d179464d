// rotorbench acquire: the long-running logger (`rotorbench daemon --config FILE`).
//
// One reader thread per port (rig protocol or plain-text instrument) turns bytes into
// samples on the daemon's clock (seconds since it started; a rig's own clock is mapped
// onto it with a slewed offset, so its sample spacing is kept). The main thread merges
// the ports on those times (a short reorder window), cuts runs (run_cutter.h), commits on
// a fixed schedule so that no sample waits more than 0.25 s (reorder window + commit
// interval) for its commit, and answers a local control socket (user-only permissions,
// peer credentials checked; served without blocking the loop): "status", "mount LABEL",
// "unmount". A commit that fails for any reason but a lock held by another writer (a full
// or failing disk) stops the daemon with an error; what was committed stays. A port that vanishes is
// reopened with back-off and the gap is recorded in the open run. On start, runs left
// 'recording' are marked interrupted; on stop (SIGTERM/SIGINT) the open run is closed
// with every sample received. Config (TOML):
//
//   database = "bench.db"          # optional; else --db
//   socket = "/run/user/1000/rotorbench.sock"   # optional
//   motor = "M-17"                 # optional: the motor on the bench at start
//   commit_interval_s = 0.1        # optional; at most 0.15 - the 0.1 s reorder window
//   max_database_mb = 2000         # optional: stop logging (cleanly) when the file reaches this
//   [[port]]
//   name = "rig"                   # optional
//   path = "/dev/ttyACM0"
//   protocol = "rig"               # or "text"
//   instrument = "tach.toml"       # text: the field map (text_instrument.h)
//   baud = 115200
//   [cutter]                       # optional: run_cutter.h thresholds
#pragma once

#include <csignal>
#include <functional>
#include <string>
#include <vector>

#include "acquire/run_cutter.h"
#include "acquire/text_instrument.h"
#include "base/status.h"

namespace rb::acquire {

struct DaemonPortConfig {
  std::string name;
  std::string path;
  std::string protocol = "rig";  ///< "rig" or "text"
  TextInstrumentMap instrument;  ///< text ports
  int baud = 115200;
};

/// The longest a received sample waits before its commit starts [s] (docs/design.md,
/// "Promises" 1): the reorder window plus the commit interval.
inline constexpr double kMaxSampleWaitS = 0.25;

struct DaemonConfig {
  std::string database;  ///< empty: the caller's --db
  std::string socket;    ///< empty: DefaultSocketPath()
  std::string motor;     ///< mounted at start (empty: none)
  std::vector<DaemonPortConfig> ports;
  CutterOptions cutter;
  double commit_interval_s = 0.1;   ///< merge_delay_s + this ≤ kMaxSampleWaitS (promise 1); 50 ms left for the commit
  double merge_delay_s = 0.1;       ///< reorder window across ports
  double max_database_mb = 0;       ///< 0 = no limit; else the file stops growing here
  double reconnect_max_s = 4.0;    ///< back-off ceiling
};

Result<DaemonConfig> LoadDaemonConfig(const std::string& path);

/// $XDG_RUNTIME_DIR/rotorbench/daemon.sock, else /tmp/rotorbench-UID/daemon.sock.
std::string DefaultSocketPath();

/// Runs until *stop is set. `say` gets log lines (connects, gaps, runs).
Status RunDaemon(const DaemonConfig& config, const std::string& db_path,
                 const volatile std::sig_atomic_t* stop,
                 const std::function<void(const std::string&)>& say);

/// Sends one request line to a running daemon and returns its one-line (JSON) answer.
Result<std::string> DaemonRequest(const std::string& socket_path, const std::string& request);

}  // namespace rb::acquire
