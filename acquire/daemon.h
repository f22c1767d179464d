// rotorbench acquire: the long-running logger (`rotorbench daemon --config FILE`).
//
// One reader thread per port (rig protocol or plain-text instrument) turns bytes into
// samples on the daemon's clock (seconds since it started; a rig's own clock is mapped
// onto it with a slewed offset, so its sample spacing is kept). The main thread merges
// the ports on those times (a short reorder window), cuts runs (run_cutter.h), commits at
// least every 250 ms, and answers a local control socket (user-only permissions, peer
// credentials checked): "status", "mount LABEL", "unmount". A port that vanishes is
// reopened with back-off and the gap is recorded in the open run. On start, runs left
// 'recording' are marked interrupted; on stop (SIGTERM/SIGINT) the open run is closed
// with every sample received. Config (TOML):
//
//   database = "bench.db"          # optional; else --db
//   socket = "/run/user/1000/rotorbench.sock"   # optional
//   motor = "M-17"                 # optional: the motor on the bench at start
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

struct DaemonConfig {
  std::string database;  ///< empty: the caller's --db
  std::string socket;    ///< empty: DefaultSocketPath()
  std::string motor;     ///< mounted at start (empty: none)
  std::vector<DaemonPortConfig> ports;
  CutterOptions cutter;
  double commit_interval_s = 0.2;  ///< ≤ 0.25 by promise
  double merge_delay_s = 0.1;      ///< reorder window across ports
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
