// The logging daemon over real pseudo-terminals: a rig unplugged mid-run and restarted
// (reconnect, gap recorded, samples on both sides intact), SIGTERM mid-run (run closed,
// nothing lost), two plain-text instruments merged on host time, the control socket.
#include <doctest/doctest.h>
#include <sys/stat.h>

#include <nlohmann/json.hpp>

#include <cmath>
#include <map>

#include "base/time_util.h"
#include "storage/storage.h"
#include "tests/acquire/pty_helpers.h"

using namespace rb;
using namespace rb::testing;

namespace {

/// Spacing of consecutive current readings in a run, in µs, summarised.
struct Spacing {
  std::size_t n = 0, off_grid = 0;
};
Spacing AdcSpacing(const std::vector<model::Sample>& s, double from, double to) {
  Spacing r;
  double prev = NAN;
  for (const model::Sample& x : s) {
    if (!model::HasCurrent(x) || x.t < from || x.t > to) continue;
    ++r.n;
    // 2 kHz → 500 µs; the rig clock is mapped with at most 200 ppm slew (0.1 µs).
    if (!std::isnan(prev) && std::fabs((x.t - prev) * 1e6 - 500) > 1.0) ++r.off_grid;
    prev = x.t;
  }
  return r;
}

}  // namespace

TEST_CASE("daemon: rig unplugged mid-run and restarted, then SIGTERM mid-run") {
  TempDir dir;
  const std::string db = dir.File("b.db"), link = dir.File("rig"), sock = dir.File("ctl.sock");
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M1"}).exit_code == 0);
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M2"}).exit_code == 0);
  // A run left 'recording' by a logger that died: the daemon marks it interrupted.
  {
    auto d = storage::Database::Open(db);
    storage::NewRun nr;
    nr.motor_id = d->FindMotor("M1")->id;
    nr.started_utc = UtcNowIso();
    REQUIRE(d->BeginRun(nr).ok());
  }
  WriteFile(dir.File("d.toml"), "socket = \"ctl.sock\"\nmotor = \"M1\"\n[[port]]\npath = \"" + link +
                                    "\"\nprotocol = \"rig\"\n");
  // The rig's "button" switches the output on at 0.5 s for 3 s, then off for 2 s.
  const std::vector<std::string> sim_args = {ROTORBENCH_BIN, "rig-sim", "--link", link, "--auto-cycle", "3,2",
                                             "--friction", "2", "--max-seconds", "60"};
  auto sim = std::make_unique<Child>(sim_args, dir.File("sim1.log"));
  REQUIRE(WaitForPath(link));
  Child daemon({ROTORBENCH_BIN, "--db", db, "daemon", "--config", dir.File("d.toml")}, dir.File("daemon.log"));
  REQUIRE(WaitForPath(sock));
  struct stat st {};
  REQUIRE(::stat(sock.c_str(), &st) == 0);
  CHECK((st.st_mode & 0777) == 0600);  // user-only control socket

  // Mid-run (the output is on from 0.5 s to 3.5 s): pull the cable.
  auto open_run = [&](const char* kind) {
    return WaitUntil(
        [&] {
          CommandResult s = RunRotorbench({"status", "--socket", sock, "--json"});
          if (s.exit_code != 0) return false;
          auto j = nlohmann::json::parse(s.out);
          return !j["run"].is_null() && j["run"]["kind"] == kind && j["run"]["samples"].get<int>() > 400;
        },
        15);
  };
  REQUIRE(open_run("steady"));
  sim->Stop();  // the PTY closes: to the daemon, an unplugged cable
  std::this_thread::sleep_for(std::chrono::milliseconds(800));
  sim = std::make_unique<Child>(sim_args, dir.File("sim2.log"));
  REQUIRE(WaitUntil(
      [&] {
        CommandResult s = RunRotorbench({"status", "--socket", sock, "--json"});
        if (s.exit_code != 0) return false;
        auto j = nlohmann::json::parse(s.out);
        return j["ports"][0]["connected"].get<bool>() && j["ports"][0]["gaps"].get<int>() == 1;
      },
      15));
  // bench mount: the next runs belong to M2.
  CommandResult m = RunRotorbench({"bench", "mount", "M2", "--socket", sock});
  CHECK(m.exit_code == 0);
  CHECK(RunRotorbench({"bench", "mount", "NOPE", "--socket", sock}).exit_code == 1);
  // Second rig's output on at 0.5 s: SIGTERM while its spin-up or steady run is open.
  REQUIRE(open_run("steady"));
  CHECK(daemon.Stop() == 0);

  auto d = storage::Database::Open(db);
  REQUIRE(d.ok());
  auto runs = d->ListRuns();
  REQUIRE(runs.ok());
  REQUIRE(runs->size() >= 5);
  CHECK((*runs)[0].status == storage::RunStatus::kInterrupted);  // the stale one
  int gaps = 0, recording = 0;
  std::int64_t gap_run = 0;
  double gap_t = NAN;
  for (const auto& r : *runs) {
    recording += r.status == storage::RunStatus::kRecording;
    auto ev = d->ListEvents(r.id);
    REQUIRE(ev.ok());
    for (const auto& e : *ev) {
      if (e.kind == "gap") {
        ++gaps;
        gap_run = r.id;
        gap_t = e.t;
      }
    }
  }
  CHECK(recording == 0);
  REQUIRE(gaps == 1);
  // The run open at the unplug keeps every sample before the gap: a gap-free 2 kHz
  // sequence from its start to the moment the data stopped.
  auto before = d->ReadSamples(gap_run);
  REQUIRE(before.ok());
  const Spacing sb = AdcSpacing(*before, 0, gap_t);
  CHECK(sb.n > 400);
  CHECK(sb.off_grid == 0);
  // The last run was open at SIGTERM: closed as interrupted, gap-free to the end.
  const storage::Run& last = runs->back();
  CHECK(last.status == storage::RunStatus::kInterrupted);
  CHECK(last.motor_label == "M2");
  auto ev = d->ListEvents(last.id);
  REQUIRE(ev.ok());
  REQUIRE(!ev->empty());
  CHECK(ev->back().kind == "end");
  CHECK(ev->back().detail.find("daemon stopped") == 0);
  auto after = d->ReadSamples(last.id);
  const Spacing sa = AdcSpacing(*after, 0, 1e9);
  CHECK(sa.n > 400);
  CHECK(sa.off_grid == 0);
  // Runs after the reconnect carry the new rig's data too.
  std::map<std::string, int> kinds;
  for (const auto& r : *runs) kinds[std::string(model::RunKindName(r.kind))] += r.id > gap_run;
  CHECK(kinds["spinup"] >= 1);
}

TEST_CASE("daemon: two plain-text instruments on two ports, merged on host time, runs detected from data") {
  TempDir dir;
  const std::string db = dir.File("b.db"), sock = dir.File("ctl.sock");
  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M1"}).exit_code == 0);
  Child sim({ROTORBENCH_BIN, "rig-sim", "--tach-link", dir.File("tach"), "--meter-link", dir.File("meter"),
             "--text-rate", "50", "--auto-cycle", "1.5,2.5", "--friction", "2", "--max-seconds", "60"},
            dir.File("sim.log"));
  REQUIRE(WaitForPath(dir.File("meter")));
  WriteFile(dir.File("d.toml"),
            "socket = \"ctl.sock\"\nmotor = \"M1\"\n"
            "[[port]]\nname = \"tach\"\npath = \"" + dir.File("tach") + "\"\nprotocol = \"text\"\n"
            "instrument = \"" + Fixture("instruments/sim-tach.toml") + "\"\n"
            "[[port]]\nname = \"meter\"\npath = \"" + dir.File("meter") + "\"\nprotocol = \"text\"\n"
            "instrument = \"" + Fixture("instruments/sim-meter.toml") + "\"\n");
  Child daemon({ROTORBENCH_BIN, "--db", db, "daemon", "--config", dir.File("d.toml")}, dir.File("daemon.log"));
  REQUIRE(WaitForPath(sock));
  // One on/off cycle: spin-up, steady, coast-down, all cut from the data.
  REQUIRE(WaitUntil(
      [&] {
        auto d = storage::Database::Open(db);
        auto runs = d.ok() ? d->ListRuns() : Result<std::vector<storage::Run>>(Status::NotFound(""));
        if (!runs.ok()) return false;
        for (const auto& r : *runs) {
          if (r.kind == model::RunKind::kCoastDown && r.status == storage::RunStatus::kComplete) return true;
        }
        return false;
      },
      20));
  CommandResult st = RunRotorbench({"status", "--socket", sock});
  CHECK(st.exit_code == 0);
  CHECK(st.out.find("connected") != std::string::npos);
  CHECK(daemon.Stop() == 0);
  auto d = storage::Database::Open(db);
  auto runs = d->ListRuns();
  REQUIRE(runs.ok());
  std::vector<std::string> kinds;
  for (const auto& r : *runs) kinds.emplace_back(model::RunKindName(r.kind));
  REQUIRE(kinds.size() >= 3);
  CHECK(kinds[0] == "spinup");
  CHECK(kinds[1] == "steady");
  CHECK(kinds[2] == "coastdown");
  // Readings from both instruments, interleaved in time in one run.
  auto s = d->ReadSamples((*runs)[1].id);
  REQUIRE(s.ok());
  std::size_t speed = 0, current = 0;
  double prev = -1;
  bool ordered = true;
  for (const model::Sample& x : *s) {
    speed += model::HasSpeed(x);
    current += model::HasCurrent(x);
    ordered = ordered && x.t >= prev;
    prev = x.t;
  }
  CHECK(speed > 10);
  CHECK(current > 10);
  CHECK(ordered);
  // The steady run's speed is the simulated motor's (about 8 000 rpm at 6 V with 2 mN·m
  // friction; here only its order of magnitude is checked: the tach is the sim's own).
  CHECK(s->back().t > 0.3);
}
