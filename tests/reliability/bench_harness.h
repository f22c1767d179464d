// Reliability tests: a simulated rig and the logging daemon as real processes on a real
// pseudo-terminal, with what the rig sent (its emission log) as the reference.
//
// Tiers: the quick tier (CI, `scripts/test`) runs every test with small counts; the long
// tier (`scripts/stress`, ROTORBENCH_STRESS=1) runs the same tests with large ones.
#pragma once

#include <signal.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "acquire/daemon.h"
#include "acquire/sim_firmware.h"
#include "storage/storage.h"
#include "tests/acquire/pty_helpers.h"

namespace rb::testing {

/// `quick` in the quick tier, `long_tier` in the long one (LongTier(), tests/testutil.h).
inline int TierCount(int quick, int long_tier) { return LongTier() ? long_tier : quick; }

/// A seed for "random moments": ROTORBENCH_SEED if set (to replay a failure), else fresh.
inline std::uint32_t TestSeed() {
  if (const char* e = std::getenv("ROTORBENCH_SEED"); e && *e) return static_cast<std::uint32_t>(std::stoul(e));
  return std::random_device{}();
}

/// Nanoseconds on CLOCK_MONOTONIC (std::chrono::steady_clock on Linux), the clock the
/// simulated rig's emission log is anchored to.
inline std::int64_t MonotonicNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::steady_clock::now().time_since_epoch())
      .count();
}

/// A TOML basic string holding `s` (quotes, backslashes and control characters escaped).
inline std::string TomlString(const std::string& s) {
  std::string out = "\"";
  for (const char c : s) {
    if (c == '"' || c == '\\') {
      out += '\\';
      out += c;
    } else if (static_cast<unsigned char>(c) < 0x20) {
      char buf[8];
      std::snprintf(buf, sizeof buf, "\\u%04x", c);
      out += buf;
    } else {
      out += c;
    }
  }
  return out + "\"";
}

/// One bench: a database with motor M1, a rig-sim on a PTY with an emission log, and the
/// daemon logging from it (started and killed by the test).
struct RigBench {
  TempDir dir{TempDir::kTmpDir};
  std::string base;  ///< where the bench's files live: dir, or a subdirectory of it
  std::string db, link, sock, emit, config;
  std::unique_ptr<Child> sim, daemon;
  int daemon_starts = 0;

  /// `subdir`: put the bench's files (database, socket, config) in this subdirectory.
  explicit RigBench(const std::string& motor = "M1", const std::string& subdir = "") {
    base = subdir.empty() ? dir.path() : dir.File(subdir);
    std::filesystem::create_directories(base);
    db = base + "/bench.db";
    link = dir.File("rig");
    sock = base + "/ctl.sock";
    emit = dir.File("emit.csv");
    config = base + "/daemon.toml";
    CommandResult r = RunRotorbench({"--db", db, "motor", "add", motor});
    REQUIRE(r.exit_code == 0);
    WriteConfig("motor = " + TomlString(motor) + "\n");
  }
  ~RigBench() {
    daemon.reset();
    sim.reset();
  }

  /// The daemon's config: `extra` TOML keys, then the rig port.
  void WriteConfig(const std::string& extra) {
    WriteFile(config, "socket = " + TomlString(sock) + "\n" + extra + "[[port]]\nname = \"rig\"\npath = " +
                          TomlString(link) + "\nprotocol = \"rig\"\n");
  }

  /// rig-sim with the emission log and `extra` options (e.g. --auto-cycle ON,OFF).
  void StartRig(const std::vector<std::string>& extra) {
    std::vector<std::string> a = {ROTORBENCH_BIN, "rig-sim", "--link", link, "--emission-log", emit};
    a.insert(a.end(), extra.begin(), extra.end());
    sim = std::make_unique<Child>(a, dir.File("sim.log"));
    REQUIRE(sim->started());
    REQUIRE(WaitForPath(link, 10));
  }

  /// Starts the daemon and waits for its control socket.
  void StartDaemon() {
    ::unlink(sock.c_str());
    daemon = std::make_unique<Child>(std::vector<std::string>{ROTORBENCH_BIN, "--db", db, "daemon", "--config", config},
                                     DaemonLog(++daemon_starts));
    REQUIRE(daemon->started());
    REQUIRE(WaitUntil([&] { return Status().has_value() || daemon->Poll(); }, 20));
    REQUIRE(!daemon->Poll());
  }
  std::string DaemonLog(int n) const { return dir.File("daemon-" + std::to_string(n) + ".log"); }

  /// The daemon's status answer, if it answers.
  std::optional<nlohmann::json> Status() const {
    Result<std::string> r = acquire::DaemonRequest(sock, "status");
    if (!r.ok()) return std::nullopt;
    nlohmann::json j = nlohmann::json::parse(*r, nullptr, false);
    if (j.is_discarded() || !j.value("ok", false)) return std::nullopt;
    return j;
  }

  /// Waits until a run is open with at least `committed` samples acknowledged.
  bool WaitForOpenRun(std::size_t committed, double seconds) const {
    return WaitUntil(
        [&] {
          auto s = Status();
          return s && !(*s)["run"].is_null() && (*s)["run"]["committed"].get<std::size_t>() >= committed;
        },
        seconds);
  }

  acquire::EmissionLog Emissions() const {
    Result<acquire::EmissionLog> log = acquire::ReadEmissionLog(emit);
    REQUIRE(log.ok());
    REQUIRE(log->monotonic_ns_at_start > 0);
    return *log;
  }
};

/// The rig's device time [µs] at a CLOCK_MONOTONIC instant.
inline std::int64_t DeviceUsAt(const acquire::EmissionLog& log, std::int64_t monotonic_ns) {
  return log.clock_start_us + (monotonic_ns - log.monotonic_ns_at_start) / 1000;
}

/// A stored run's ADC samples matched to the records the rig sent.
struct Alignment {
  std::size_t adc = 0;             ///< stored samples with a current reading
  std::size_t unmatched = 0;       ///< no record the rig sent at that device time
  std::size_t skipped = 0;         ///< a record the rig sent is missing in between
  std::size_t wrong_values = 0;    ///< value differs from the rig's counts × scale
  double scale_current = NAN;      ///< A per count, as the stored values imply
  std::int64_t first_us = -1, last_us = -1;  ///< device times of the first and last sample
  std::string first_wrong;         ///< the first wrong value, described (for the failure message)
};

/// Aligns run `run`'s ADC samples with the emission log: the run's metadata gives the rig's
/// clock at run time 0 (ports[0].device_t0_us), which locates the first sample exactly
/// (±2 µs). Each later sample is located from the one before: its device time is the
/// previous match plus the stored spacing, within the daemon's clock slew (≤ 200 ppm of the
/// spacing, docs/design.md, + 2 µs of rounding), which is far below the record spacing;
/// the nearest record sent must be there and come after the previous one. Values must be
/// the sent counts times one scale per channel (the rig's IDENTIFY scale; no offset).
/// Samples at run time ≥ `until_t` are left out (after a reconnect the rig's clock is mapped
/// afresh, so one anchor no longer holds).
inline Alignment AlignRun(storage::Database& db, const storage::Run& run, const acquire::EmissionLog& log,
                          double until_t = INFINITY) {
  Alignment a;
  const auto meta = nlohmann::json::parse(run.meta_json);
  REQUIRE(meta.contains("ports"));
  REQUIRE(meta["ports"][0].contains("device_t0_us"));
  const std::int64_t t0 = meta["ports"][0]["device_t0_us"];
  auto samples = db.ReadSamples(run.id);
  REQUIRE(samples.ok());
  const auto& us = log.adc_us;
  // The record sent nearest to device time d.
  auto nearest = [&](double d) {
    auto it = std::lower_bound(us.begin(), us.end(), static_cast<std::int64_t>(std::floor(d)));
    if (it == us.end() || (it != us.begin() && d - static_cast<double>(*std::prev(it)) < static_cast<double>(*it) - d)) {
      --it;
    }
    return static_cast<std::size_t>(it - us.begin());
  };
  std::optional<std::size_t> idx;
  double last_t = 0, scale_v = NAN;
  for (const model::Sample& s : *samples) {
    if (!model::HasCurrent(s) || s.t >= until_t) continue;
    ++a.adc;
    if (us.empty()) {
      ++a.unmatched;
      continue;
    }
    double pred = static_cast<double>(t0) + s.t * 1e6, tol = 2;
    if (idx) {
      pred = static_cast<double>(us[*idx]) + (s.t - last_t) * 1e6;
      tol = 2 + 2e-4 * (s.t - last_t) * 1e6;
    }
    const std::size_t k = nearest(pred);
    if (std::fabs(static_cast<double>(us[k]) - pred) > tol || (idx && k <= *idx)) {
      ++a.unmatched;  // no record sent there, or one stored twice / out of order
      continue;
    }
    if (!idx) a.first_us = us[k];
    if (idx && k > *idx + 1) ++a.skipped;  // records sent in between are missing
    idx = k;
    last_t = s.t;
    a.last_us = us[k];
    if (!log.adc_counts.empty()) {
      const auto& c = log.adc_counts[k];
      auto same_scale = [&](double value, int counts, double* scale) {
        if (counts == 0) return value == 0.0;
        const double q = value / counts;
        if (std::isnan(*scale)) *scale = q;
        return std::fabs(q - *scale) <= 1e-12 * std::fabs(*scale);
      };
      const bool ok_i = same_scale(s.current, c.current, &a.scale_current);
      const bool ok_v = std::isnan(s.voltage) || same_scale(s.voltage, c.voltage, &scale_v);
      if (!(ok_i && ok_v) && a.first_wrong.empty()) {
        a.first_wrong = "sample " + std::to_string(a.adc) + " at t " + std::to_string(s.t) + " s (device " +
                        std::to_string(us[k]) + " µs, record " + std::to_string(k) + "): I " +
                        std::to_string(s.current) + ", V " + std::to_string(s.voltage) + " vs counts " +
                        std::to_string(c.current) + ", " + std::to_string(c.voltage) + " (scales " +
                        std::to_string(a.scale_current) + ", " + std::to_string(scale_v) + ")";
      }
      a.wrong_values += !(ok_i && ok_v);
    }
  }
  return a;
}

/// The percentile p (0..1) of `v` (nearest rank); NaN for an empty vector.
inline double Percentile(std::vector<double> v, double p) {
  if (v.empty()) return NAN;
  std::sort(v.begin(), v.end());
  const auto k = static_cast<std::size_t>(std::ceil(p * static_cast<double>(v.size()))) - (p > 0 ? 1 : 0);
  return v[std::min(k, v.size() - 1)];
}

}  // namespace rb::testing
