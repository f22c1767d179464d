// Promises 1–3 (docs/design.md) against faults of the rig and of the disk, end to end: a
// simulated rig on a real PTY, the daemon as a real process, the rig's emission log as the
// reference for what was sent.
//   - the rig unplugged mid-run (and plugged back): a gap event, everything before the
//     unplug kept exactly, logging resumes;
//   - the database reaches its size limit (max_database_mb: SQLite's "database or disk is
//     full", the same error as a full disk) and the disk refuses writes (a file-size limit:
//     write() fails): the daemon stops with a one-line error, the database is intact, every
//     acknowledged sample is stored, the run is marked interrupted at the next start;
//   - a flood of garbage bytes and corrupted frames at a high rate: counted and skipped, no
//     sample that the rig did not send, no crash, CPU time bounded.
#include <doctest/doctest.h>

#include <fstream>
#include <sstream>
#include <thread>

#include "tests/reliability/bench_harness.h"

using namespace rb;
using namespace rb::testing;

namespace {

void Figure(const std::string& line) {
  if (const char* f = std::getenv("ROTORBENCH_FIGURES"); f && *f) std::ofstream(f, std::ios::app) << line << "\n";
}

void Sleep(double s) { std::this_thread::sleep_for(std::chrono::duration<double>(s)); }

storage::Database OpenReadOnly(const std::string& path) {
  storage::OpenOptions o;
  o.read_only = true;
  auto db = storage::Database::Open(path, o);
  REQUIRE(db.ok());
  return std::move(*db);
}

/// CPU seconds (user + system) a live process has used, from /proc/PID/stat.
double CpuSeconds(pid_t pid) {
  std::ifstream f("/proc/" + std::to_string(pid) + "/stat");
  std::string text((std::istreambuf_iterator<char>(f)), std::istreambuf_iterator<char>());
  const auto close = text.rfind(')');
  REQUIRE(close != std::string::npos);
  std::istringstream ss(text.substr(close + 2));
  std::string field;
  double utime = 0, stime = 0;
  for (int k = 3; k <= 15 && ss >> field; ++k) {  // fields 14 and 15: utime, stime (ticks)
    if (k == 14) utime = std::stod(field);
    if (k == 15) stime = std::stod(field);
  }
  return (utime + stime) / static_cast<double>(::sysconf(_SC_CLK_TCK));
}

/// Lines of a file that are not empty.
std::vector<std::string> Lines(const std::string& path) {
  std::vector<std::string> out;
  std::istringstream ss(ReadFile(path));
  for (std::string l; std::getline(ss, l);) {
    if (!l.empty()) out.push_back(l);
  }
  return out;
}

/// Run time of the first gap event of a run (the rig lost), or infinity.
double FirstGap(storage::Database& db, std::int64_t run_id) {
  auto ev = db.ListEvents(run_id);
  REQUIRE(ev.ok());
  for (const storage::RunEvent& e : *ev) {
    if (e.kind == "gap") return e.t;
  }
  return INFINITY;
}

/// Checks every run of the bench against what the rig sent (up to a gap: after it the rig's
/// clock is mapped afresh); returns the number of runs.
std::size_t CheckAllRuns(RigBench& b, bool allow_skips) {
  storage::Database db = OpenReadOnly(b.db);
  CHECK(db.IntegrityCheck().ok());
  auto runs = db.ListRuns();
  REQUIRE(runs.ok());
  const acquire::EmissionLog log = b.Emissions();
  for (const storage::Run& r : *runs) {
    CAPTURE(r.id);
    CHECK(r.status != storage::RunStatus::kRecording);
    const Alignment a = AlignRun(db, r, log, FirstGap(db, r.id));
    CHECK(a.adc > 0);
    CHECK(a.unmatched == 0);
    CHECK_MESSAGE(a.wrong_values == 0, a.first_wrong);
    if (!allow_skips) CHECK(a.skipped == 0);
  }
  return runs->size();
}

}  // namespace

TEST_CASE("rig unplugged mid-run: gap recorded, every sample before it kept, logging resumes") {
  RigBench b;
  // Output on at 0.5 s for 3 s; the cable is pulled at 2.0 s (inside the steady run) for 1 s.
  b.StartRig({"--auto-cycle", "3,1", "--friction", "2", "--fault-vanish-at", "2.0", "--fault-vanish-for", "1",
              "--max-seconds", "120"});
  b.StartDaemon();
  REQUIRE(WaitUntil(
      [&] {
        auto s = b.Status();
        return s && (*s)["ports"][0]["gaps"].get<int>() == 1 && (*s)["ports"][0]["connected"].get<bool>();
      },
      20));
  // After the reconnect the rig (reset by the unplug) cycles again: wait for a new run.
  REQUIRE(WaitUntil(
      [&] {
        auto s = b.Status();
        return s && (*s)["runs_started"].get<int>() >= 4;
      },
      20));
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();
  const acquire::EmissionLog log = b.Emissions();
  storage::Database db = OpenReadOnly(b.db);
  auto runs = db.ListRuns();
  REQUIRE(runs.ok());
  int gaps = 0;
  for (const storage::Run& r : *runs) {
    CAPTURE(r.id);
    auto ev = db.ListEvents(r.id);
    REQUIRE(ev.ok());
    for (const storage::RunEvent& e : *ev) {
      if (e.kind != "gap") continue;
      ++gaps;
      // The run open at the unplug holds the rig's records up to the unplug, none skipped;
      // the last ones before the cable went are at most the frames in flight (PTY buffer).
      const Alignment a = AlignRun(db, r, log, e.t);
      CHECK(a.adc > 0);
      CHECK(a.unmatched == 0);
      CHECK_MESSAGE(a.wrong_values == 0, a.first_wrong);
      CHECK(a.skipped == 0);
      const double unplug_us = 2.0e6 + static_cast<double>(log.clock_start_us);
      CHECK(static_cast<double>(a.last_us) <= unplug_us + 20e3);  // a 10 ms step of the rig, rounded up
      CHECK(static_cast<double>(a.last_us) >= unplug_us - 100e3);
    }
  }
  CHECK(gaps == 1);
  CHECK(CheckAllRuns(b, /*allow_skips=*/false) >= 4);
}

TEST_CASE("database size limit reached while logging: clean stop, one-line error, nothing committed lost") {
  RigBench b;
  // 20 kHz ADC: about 0.7 MB of samples a second against a 1 MB database.
  b.WriteConfig("motor = \"M1\"\nmax_database_mb = 1\n");
  b.StartRig({"--auto-cycle", "30,1", "--adc-rate", "20000", "--friction", "2", "--max-seconds", "120"});
  b.StartDaemon();
  std::int64_t acked = 0, acked_run = 0;
  REQUIRE(WaitUntil(
      [&] {
        if (auto s = b.Status(); s && !(*s)["run"].is_null()) {
          acked_run = (*s)["run"]["id"];
          acked = (*s)["run"]["committed"];
        }
        return b.daemon->Poll();
      },
      60));
  CHECK(b.daemon->Wait() == 1);
  const std::vector<std::string> lines = Lines(b.DaemonLog(1));
  REQUIRE(!lines.empty());
  INFO(ReadFile(b.DaemonLog(1)));
  // One line says why, names the file and what happened.
  CHECK(lines.back().rfind("rotorbench: error: commit failed; logging stopped: " + b.db, 0) == 0);
  CHECK(lines.back().find("full") != std::string::npos);
  CHECK(acked > 0);
  {
    storage::Database db = OpenReadOnly(b.db);
    CHECK(db.IntegrityCheck().ok());
    auto r = db.GetRun(acked_run);
    REQUIRE(r.ok());
    CHECK(r->sample_count >= acked);
    Figure("disk_full limit_mb=1 acked=" + std::to_string(acked) + " stored=" + std::to_string(r->sample_count));
  }
  // With room again (no limit), the next start marks the run interrupted, samples kept.
  b.WriteConfig("motor = \"M1\"\n");
  b.StartDaemon();
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();
  CHECK(CheckAllRuns(b, /*allow_skips=*/false) >= 1);
  storage::Database db = OpenReadOnly(b.db);
  auto r = db.GetRun(acked_run);
  REQUIRE(r.ok());
  CHECK(r->status == storage::RunStatus::kInterrupted);
  CHECK(r->sample_count >= acked);
}

TEST_CASE("the disk refuses writes while logging (file size limit): clean stop, nothing committed lost") {
  RigBench b;
  b.StartRig({"--auto-cycle", "30,1", "--adc-rate", "20000", "--friction", "2", "--max-seconds", "120"});
  // prlimit (util-linux) caps the size of any file the daemon writes at 1.5 MB: the WAL
  // reaches it and write() fails (EFBIG; SIGXFSZ is ignored, inherited from here).
  if (RunProgram({"prlimit", "--version"}).exit_code != 0) {
    MESSAGE("skipped: prlimit (util-linux) is not installed");
    return;
  }
  struct sigaction ign {}, old {};
  ign.sa_handler = SIG_IGN;
  ::sigaction(SIGXFSZ, &ign, &old);
  ::unlink(b.sock.c_str());
  b.daemon = std::make_unique<Child>(
      std::vector<std::string>{"/usr/bin/prlimit", "--fsize=1500000", "--", ROTORBENCH_BIN, "--db", b.db, "daemon",
                               "--config", b.config},
      b.DaemonLog(++b.daemon_starts));
  ::sigaction(SIGXFSZ, &old, nullptr);
  std::int64_t acked = 0, acked_run = 0;
  REQUIRE(WaitUntil(
      [&] {
        if (auto s = b.Status(); s && !(*s)["run"].is_null()) {
          acked_run = (*s)["run"]["id"];
          acked = (*s)["run"]["committed"];
        }
        return b.daemon->Poll();
      },
      60));
  INFO(ReadFile(b.DaemonLog(1)));
  CHECK(b.daemon->Wait() == 1);
  const std::vector<std::string> lines = Lines(b.DaemonLog(1));
  REQUIRE(!lines.empty());
  CHECK(lines.back().rfind("rotorbench: error: commit failed; logging stopped: " + b.db, 0) == 0);
  CHECK(acked > 0);
  b.StartDaemon();  // no limit now: marks the run interrupted
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();
  CHECK(CheckAllRuns(b, /*allow_skips=*/false) >= 1);
  storage::Database db = OpenReadOnly(b.db);
  auto r = db.GetRun(acked_run);
  REQUIRE(r.ok());
  CHECK(r->status == storage::RunStatus::kInterrupted);
  CHECK(r->sample_count >= acked);
}

TEST_CASE("garbage flood at a high rate: counted and skipped, no wrong sample, no crash, CPU bounded") {
  const double seconds = TierCount(4, 60);
  RigBench b;
  // 37 random bytes every 0.2 ms (185 kB/s, about 12 times the rig's own data rate) and
  // every 7th frame with a bad CRC, while the output cycles.
  b.StartRig({"--auto-cycle", "1.5,0.5", "--friction", "2", "--fault-garbage-every", "0.0002",
              "--fault-corrupt-every", "7", "--max-seconds", std::to_string(seconds + 60)});
  b.StartDaemon();
  REQUIRE(b.WaitForOpenRun(1, 10));
  const double cpu0 = CpuSeconds(b.daemon->pid());
  const auto t0 = std::chrono::steady_clock::now();
  Sleep(seconds);
  const double cpu = CpuSeconds(b.daemon->pid()) - cpu0;
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  auto st = b.Status();
  REQUIRE(st);
  const nlohmann::json& port = (*st)["ports"][0];
  const std::uint64_t garbage = port["garbage_bytes"], bad = port["bad_frames"], frames = port["frames"];
  CHECK(!b.daemon->Poll());  // still running
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();
  CHECK(garbage > 0);
  CHECK(bad > 0);
  CHECK(port["connected"].get<bool>());
  // The runs hold only what the rig sent, with its values (records in rejected frames are
  // missing, so skips are expected here).
  const std::size_t runs = CheckAllRuns(b, /*allow_skips=*/true);
  CHECK(runs >= 2);
  // A decoder that spun on garbage would use a whole core; the daemon's share stays small
  // (a loose bound against runaway loops, not a speed goal: bench/ measures speed).
  CHECK(cpu / wall < 0.5);
  MESSAGE("garbage flood: " << wall << " s, " << garbage << " garbage bytes, " << bad << " bad frames, " << frames
                            << " good frames, " << runs << " runs; daemon CPU " << 100 * cpu / wall << " % of a core");
  Figure("garbage seconds=" + std::to_string(wall) + " garbage_bytes=" + std::to_string(garbage) +
         " bad_frames=" + std::to_string(bad) + " frames=" + std::to_string(frames) +
         " cpu_pct=" + std::to_string(100 * cpu / wall));
}
