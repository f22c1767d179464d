// Promise 1 (docs/design.md, "Promises"): the logging daemon is killed with SIGKILL at
// random moments while a simulated rig streams to it over a real PTY, and restarted each
// time. After every kill: PRAGMA integrity_check passes; every sample the daemon had
// acknowledged as committed (its status answer just before the kill) is stored; the stored
// samples are exactly records the rig sent (its emission log), in order, none skipped, with
// the rig's values; at most the last 0.25 s before the kill is missing (plus the one rig
// frame, 10 ms, not yet sent); and the next start marks the run interrupted, samples kept.
// "Lost" is measured on the rig's own clock: the rig's time at the kill (from the emission
// log's CLOCK_MONOTONIC anchor) minus the device time of the newest stored sample.
#include <doctest/doctest.h>

#include <fstream>
#include <thread>

#include "tests/reliability/bench_harness.h"

using namespace rb;
using namespace rb::testing;

namespace {

/// Appends a line to $ROTORBENCH_FIGURES (scripts/stress collects the measured figures).
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

}  // namespace

TEST_CASE("daemon killed with SIGKILL at random moments: nothing committed lost, at most 0.25 s missing, run interrupted") {
  const int reps = TierCount(3, 25);
  const std::uint32_t seed = TestSeed();
  INFO("seed " << seed << " (ROTORBENCH_SEED=" << seed << " replays the same moments)");
  std::mt19937 rng(seed);
  RigBench b;
  // The rig's "button": output on 1.2 s, off 0.8 s, repeatedly (spin-up, steady, coast-down).
  b.StartRig({"--auto-cycle", "1.2,0.8", "--friction", "2", "--max-seconds", "900"});
  constexpr double kFrame = 0.010;  // the rig's frame period: samples it has not sent yet
#if defined(__SANITIZE_ADDRESS__)
  // Under AddressSanitizer the daemon runs several times slower (and catches up on the
  // PTY's backlog after a restart), so the 0.25 s latency bound — a promise of the normal
  // build — is not checked; every durability check below still is.
  constexpr bool kCheckLatency = false;
#else
  constexpr bool kCheckLatency = true;
#endif
  std::vector<double> lost_s;
  struct Killed {
    std::int64_t run_id;
    std::int64_t stored;
  };
  std::vector<Killed> killed;  // runs open at a kill, with what the dead daemon left
  std::int64_t acked_total = 0;

  for (int rep = 0; rep < reps; ++rep) {
    CAPTURE(rep);
    b.StartDaemon();
    // The run the previous kill left open is now interrupted, every sample still there.
    if (!killed.empty()) {
      storage::Database db = OpenReadOnly(b.db);
      auto r = db.GetRun(killed.back().run_id);
      REQUIRE(r.ok());
      CHECK(r->status == storage::RunStatus::kInterrupted);
      CHECK(r->sample_count == killed.back().stored);
    }
    // A random moment: every other kill lands inside an open run, at a random phase of the
    // commit cycle; the others anywhere (between runs, as one begins or ends).
    Sleep(std::uniform_real_distribution<double>(0.3, 2.2)(rng));
    if (rep % 2 == 1) {
      REQUIRE(b.WaitForOpenRun(1, 10));
      Sleep(std::uniform_real_distribution<double>(0, 0.3)(rng));
    }
    std::optional<nlohmann::json> st = b.Status();  // what the daemon acknowledged last
    REQUIRE(st);
    const std::int64_t kill_ns = MonotonicNs();
    b.daemon->Signal(SIGKILL);
    CHECK(b.daemon->Wait() == 128 + SIGKILL);
    Sleep(0.3);  // the rig flushes its emission log every 0.1 s

    storage::Database db = OpenReadOnly(b.db);
    CHECK(db.IntegrityCheck().ok());
    if (!(*st)["run"].is_null()) {
      const std::int64_t id = (*st)["run"]["id"];
      const std::int64_t acked = (*st)["run"]["committed"];
      auto r = db.GetRun(id);
      REQUIRE(r.ok());
      CHECK(r->sample_count >= acked);  // acknowledged as committed ⇒ on disk
      acked_total += acked;
    }
    auto runs = db.ListRuns();
    REQUIRE(runs.ok());
    const acquire::EmissionLog log = b.Emissions();
    if (!runs->empty() && runs->back().status == storage::RunStatus::kRecording) {
      const storage::Run& last = runs->back();
      const Alignment a = AlignRun(db, last, log);
      if (kCheckLatency) CHECK(a.adc > 0);
      CHECK(a.unmatched == 0);
      CHECK(a.skipped == 0);
      CHECK_MESSAGE(a.wrong_values == 0, a.first_wrong);
      const double lost = static_cast<double>(DeviceUsAt(log, kill_ns) - a.last_us) * 1e-6;
      lost_s.push_back(lost);
      MESSAGE("kill " << rep << ": run " << last.id << " (" << model::RunKindName(last.kind) << "), "
                      << last.sample_count << " samples stored; " << lost * 1e3 << " ms before the kill missing");
      if (kCheckLatency) {
        CHECK(lost >= 0);
        CHECK(lost <= acquire::kMaxSampleWaitS + kFrame);
      }
      killed.push_back({last.id, last.sample_count});
    } else {
      MESSAGE("kill " << rep << ": no run open");
    }
  }
  // A last start marks the last killed run interrupted; SIGTERM then closes the daemon.
  b.StartDaemon();
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();

  storage::Database db = OpenReadOnly(b.db);
  CHECK(db.IntegrityCheck().ok());
  auto runs = db.ListRuns();
  REQUIRE(runs.ok());
  const acquire::EmissionLog log = b.Emissions();
  std::size_t interrupted = 0;
  for (const storage::Run& r : *runs) {
    CAPTURE(r.id);
    CHECK(r.status != storage::RunStatus::kRecording);
    interrupted += r.status == storage::RunStatus::kInterrupted;
    // Every run, before and after each restart: exactly what the rig sent.
    const Alignment a = AlignRun(db, r, log);
    CHECK(a.unmatched == 0);
    CHECK(a.skipped == 0);
    CHECK_MESSAGE(a.wrong_values == 0, a.first_wrong);
  }
  for (const Killed& k : killed) {
    auto r = db.GetRun(k.run_id);
    REQUIRE(r.ok());
    CHECK(r->status == storage::RunStatus::kInterrupted);
    CHECK(r->sample_count == k.stored);
  }
  CHECK(interrupted >= killed.size());
  CHECK(lost_s.size() >= static_cast<std::size_t>(reps / 2));  // every other kill is inside a run
  const double worst = lost_s.empty() ? NAN : *std::max_element(lost_s.begin(), lost_s.end());
  MESSAGE("kill -9: " << reps << " kills, " << lost_s.size() << " inside a run, " << runs->size()
                      << " runs checked; missing before the kill: median " << Percentile(lost_s, 0.5) * 1e3
                      << " ms, max " << worst * 1e3 << " ms (bound " << (acquire::kMaxSampleWaitS + kFrame) * 1e3
                      << " ms)");
  Figure("kill9 kills=" + std::to_string(reps) + " in_run=" + std::to_string(lost_s.size()) +
         " acked=" + std::to_string(acked_total) + " median_ms=" + std::to_string(Percentile(lost_s, 0.5) * 1e3) +
         " max_ms=" + std::to_string(worst * 1e3));
}
