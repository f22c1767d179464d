// rig-sim ↔ record over a real pseudo-terminal. The simulated rig writes an emission log
// of every ADC record and tach mark it sent (device µs); the stored runs must hold exactly
// those records, at those times (the simulated truth is the reference).
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <cmath>
#include <map>
#include <set>

#include "acquire/sim_firmware.h"
#include "storage/storage.h"
#include "tests/acquire/pty_helpers.h"

using namespace rb;
using namespace rb::testing;

namespace {

struct Bench {
  TempDir dir;
  std::string db = dir.File("bench.db");
  std::string link = dir.File("rig");
  std::string emit = dir.File("emit.csv");

  Bench() {
    CommandResult r = RunRotorbench({"--db", db, "motor", "add", "M1"});
    REQUIRE(r.exit_code == 0);
  }
  std::vector<std::string> Sim(std::vector<std::string> extra) const {
    std::vector<std::string> a = {ROTORBENCH_BIN, "rig-sim", "--link", link, "--emission-log", emit,
                                  "--max-seconds", "90"};
    a.insert(a.end(), extra.begin(), extra.end());
    return a;
  }
  CommandResult Record(std::vector<std::string> extra) const {
    std::vector<std::string> a = {"--db", db, "record", "--port", link, "--motor", "M1", "--yes"};
    a.insert(a.end(), extra.begin(), extra.end());
    return RunRotorbench(a);
  }
};

/// Device µs of each stored sample that carries an ADC reading (current).
std::vector<std::int64_t> AdcTimes(storage::Database& db, const storage::Run& run) {
  const auto meta = nlohmann::json::parse(run.meta_json);
  const std::int64_t t0 = meta["device_t0_us"];
  std::vector<std::int64_t> out;
  const auto samples = db.ReadSamples(run.id);
  REQUIRE(samples.ok());
  for (const model::Sample& s : *samples) {
    if (model::HasCurrent(s)) out.push_back(t0 + std::llround(s.t * 1e6));
  }
  return out;
}

}  // namespace

TEST_CASE("record --plan standard against rig-sim: kinds, sample counts and timing match what the rig sent") {
  Bench b;
  // Higher friction makes the coast-downs short (the test stays quick).
  Child sim(b.Sim({"--friction", "2", "--seed", "3"}), b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  CommandResult r = b.Record({"--plan", "standard", "--shaft-held"});
  INFO(r.out << r.err);
  REQUIRE(r.exit_code == 0);
  CHECK(sim.Stop() == 0);
  CHECK(r.out.find("0 lost in 0 gaps, 0 bad CRC") != std::string::npos);  // zero loss at the default rate

  Result<acquire::EmissionLog> log = acquire::ReadEmissionLog(b.emit);
  REQUIRE(log.ok());
  CHECK(log->frames_dropped == 0);
  const std::set<std::int64_t> sent(log->adc_us.begin(), log->adc_us.end());

  auto db = storage::Database::Open(b.db);
  REQUIRE(db.ok());
  auto runs = db->ListRuns();
  REQUIRE(runs.ok());
  std::vector<std::string> kinds;
  for (const auto& run : *runs) kinds.emplace_back(model::RunKindName(run.kind));
  // 3 rotor positions × 2 levels of locked pulses, then 2 × (spin-up, steady, coast-down).
  const std::vector<std::string> want = {"locked", "locked", "locked", "locked", "locked", "locked",
                                         "spinup", "steady", "coastdown", "spinup", "steady", "coastdown"};
  CHECK(kinds == want);
  std::set<int> positions;
  for (const auto& run : *runs) {
    CAPTURE(run.id);
    CHECK(run.status == storage::RunStatus::kComplete);
    const auto meta = nlohmann::json::parse(run.meta_json);
    CHECK(meta["rig"]["marks_per_rev"] == 2);
    CHECK(meta["rig"]["adc_rate_hz"] == 2000.0);
    if (run.kind == model::RunKind::kLocked) positions.insert(meta["rotor_position"].get<int>());
    // Nominal voltage = supply (6 V) × output level.
    CHECK(*run.nominal_voltage == doctest::Approx(6.0 * meta["output_level"].get<double>()));
    // Every ADC record of the run is one the rig sent, and none in between is missing:
    // 2 kHz → exactly 500 µs apart.
    const std::vector<std::int64_t> t = AdcTimes(*db, run);
    REQUIRE(t.size() > 100);
    std::size_t unknown = 0, not_500 = 0;
    for (std::size_t k = 0; k < t.size(); ++k) {
      unknown += !sent.count(t[k] & 0xFFFFFFFF);
      if (k > 0) not_500 += (t[k] - t[k - 1]) != 500;
    }
    CHECK(unknown == 0);
    CHECK(not_500 == 0);
    // The sample count is what the rig sent within the run's span.
    const auto lo = sent.lower_bound(t.front() & 0xFFFFFFFF), hi = sent.upper_bound(t.back() & 0xFFFFFFFF);
    CHECK(static_cast<std::size_t>(std::distance(lo, hi)) == t.size());
  }
  CHECK(positions == std::set<int>{0, 1, 2});

  // Alignment: the output_on event of the first spin-up sits where the current jumps.
  const storage::Run& spin = (*runs)[6];
  auto events = db->ListEvents(spin.id);
  REQUIRE(events.ok());
  double t_on = NAN;
  for (const auto& e : *events) {
    if (e.kind == "output_on") t_on = e.t;
  }
  REQUIRE(!std::isnan(t_on));
  CHECK(t_on == doctest::Approx(0.1).epsilon(0.05));  // after the 0.1 s pre-step log
  double first_rise = NAN;
  const auto spin_samples = db->ReadSamples(spin.id);
  REQUIRE(spin_samples.ok());
  for (const model::Sample& s : *spin_samples) {
    if (model::HasCurrent(s) && s.current > 0.2) {
      first_rise = s.t;
      break;
    }
  }
  CHECK(first_rise >= t_on);
  CHECK(first_rise - t_on <= 0.0011);  // the next ADC sample (500 µs grid), +1 µs rounding
  // Speed readings: the tach marks the rig sent during the spin-up, less the first.
  std::size_t readings = 0;
  for (const model::Sample& s : *spin_samples) readings += model::HasSpeed(s) && s.speed > 0;
  const auto adc = AdcTimes(*db, spin);
  std::size_t marks = 0;
  for (std::int64_t m : log->marks_us) marks += m >= (adc.front() & 0xFFFFFFFF) && m <= (adc.back() & 0xFFFFFFFF);
  CHECK(readings + 1 >= marks);
  CHECK(readings <= marks);
}

TEST_CASE("record survives injected faults and its counters show them") {
  Bench b;
  Child sim(b.Sim({"--friction", "2", "--fault-drop-every", "40", "--fault-corrupt-every", "57",
                   "--fault-garbage-every", "0.3", "--fault-stall-at", "1.0", "--fault-stall-for", "0.3"}),
            b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  CommandResult r = b.Record({"--plan", "quick"});
  INFO(r.out << r.err);
  REQUIRE(r.exit_code == 0);
  unsigned long long frames = 0, lost = 0, gaps = 0, crc = 0, trunc = 0, malformed = 0, garbage = 0;
  const auto at = r.out.find("link: ");
  REQUIRE(at != std::string::npos);
  REQUIRE(std::sscanf(r.out.c_str() + at,
                      "link: %llu frames, %llu lost in %llu gaps, %llu bad CRC, %llu truncated, %llu "
                      "malformed, %llu garbage bytes",
                      &frames, &lost, &gaps, &crc, &trunc, &malformed, &garbage) == 7);
  CHECK(lost > 0);
  CHECK(gaps > 0);
  CHECK(crc > 0);
  CHECK(garbage > 0);
  auto db = storage::Database::Open(b.db);
  auto runs = db->ListRuns();
  REQUIRE(runs->size() == 2);
  CHECK((*runs)[0].kind == model::RunKind::kSpinUp);
  CHECK((*runs)[1].kind == model::RunKind::kCoastDown);
  int gap_events = 0;
  for (const auto& run : *runs) {
    CHECK(run.status == storage::RunStatus::kComplete);
    CHECK(run.sample_count > 500);
    const auto ev = db->ListEvents(run.id);
    REQUIRE(ev.ok());
    for (const auto& e : *ev) gap_events += e.kind == "gap";
  }
  CHECK(gap_events > 0);
}

TEST_CASE("the host current limit stops the output and is recorded") {
  Bench b;
  Child sim(b.Sim({}), b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  // The demo motor draws about 3 A at switch-on from 6 V (R 1.8 Ω + 0.08 Ω supply).
  CommandResult r = b.Record({"--plan", "quick", "--current-limit", "1.0"});
  INFO(r.out << r.err);
  CHECK(r.exit_code == 1);
  // The host passes its limit to the rig too (SET_LIMITS); whichever sees the inrush first
  // (normally the rig, sample by sample) opens the output.
  CHECK(r.err.find("plan stopped: ") != std::string::npos);
  CHECK(r.err.find("above the 1.00 A limit") != std::string::npos);
  auto db = storage::Database::Open(b.db);
  auto runs = db->ListRuns();
  REQUIRE(runs->size() == 1);  // the plan stopped after the spin-up
  std::map<std::string, int> kinds;
  const auto ev = db->ListEvents((*runs)[0].id);
  REQUIRE(ev.ok());
  for (const auto& e : *ev) ++kinds[e.kind];
  CHECK(kinds["limit_trip"] == 1);
  CHECK(kinds["output_off"] == 1);
  // After the trip the current falls to zero in the stored samples.
  auto s = db->ReadSamples((*runs)[0].id);
  CHECK(std::fabs(s->back().current) < 0.05);
}

TEST_CASE("Ctrl-C during record: output off first, the open run kept as interrupted") {
  Bench b;
  // A heavy rotor: the spin-up takes seconds, so the stop lands while the output is on.
  Child sim(b.Sim({"--inertia", "80"}), b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  Child rec({ROTORBENCH_BIN, "--db", b.db, "record", "--port", b.link, "--motor", "M1", "--yes",
             "--plan", "quick"},
            b.dir.File("rec.log"));
  REQUIRE(WaitUntil(
      [&] {
        auto db = storage::Database::Open(b.db);
        if (!db.ok()) return false;
        auto runs = db->ListRuns();
        return runs.ok() && runs->size() == 1 && (*runs)[0].sample_count > 1000;
      },
      20));
  rec.Signal(SIGINT);
  CHECK(rec.Wait() == 130);
  auto db = storage::Database::Open(b.db);
  auto runs = db->ListRuns();
  REQUIRE(runs->size() == 1);
  const storage::Run& run = (*runs)[0];
  CHECK(run.kind == model::RunKind::kSpinUp);
  CHECK(run.status == storage::RunStatus::kInterrupted);
  double t_on = NAN, t_off = NAN, t_int = NAN;
  const auto ev = db->ListEvents(run.id);
  REQUIRE(ev.ok());
  for (const auto& e : *ev) {
    if (e.kind == "output_on") t_on = e.t;
    if (e.kind == "output_off") t_off = e.t;
    if (e.kind == "interrupted") t_int = e.t;
  }
  REQUIRE(!std::isnan(t_on));
  REQUIRE(!std::isnan(t_off));  // the output was switched off ...
  REQUIRE(!std::isnan(t_int));
  CHECK(t_off > t_on);
  CHECK(t_off <= t_int);  // ... before the run was closed
  // Every sample up to the close is kept: a gap-free 2 kHz sequence past the switch-off,
  // ending with the current at zero.
  const std::vector<std::int64_t> t = AdcTimes(*db, run);
  std::size_t not_500 = 0;
  for (std::size_t k = 1; k < t.size(); ++k) not_500 += (t[k] - t[k - 1]) != 500;
  CHECK(not_500 == 0);
  auto samples = db->ReadSamples(run.id);
  CHECK(samples->back().t > t_off);
  CHECK(std::fabs(samples->back().current) < 0.05);
}

TEST_CASE("record across a wrap of the rig's 32-bit µs clock: no gap, no jump") {
  Bench b;
  // The device clock starts 1.5 s before it wraps: the wrap falls inside the first run.
  Child sim(b.Sim({"--friction", "2", "--clock-start-us", std::to_string(4294967295u - 1500000u)}),
            b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  CommandResult r = b.Record({"--plan", "quick"});
  INFO(r.out << r.err);
  REQUIRE(r.exit_code == 0);
  CHECK(sim.Stop() == 0);
  auto db = storage::Database::Open(b.db);
  auto runs = db->ListRuns();
  REQUIRE(runs->size() == 2);
  bool crossed = false;
  for (const auto& run : *runs) {
    const std::vector<std::int64_t> t = AdcTimes(*db, run);
    std::size_t not_500 = 0;
    for (std::size_t k = 1; k < t.size(); ++k) {
      not_500 += (t[k] - t[k - 1]) != 500;
      crossed = crossed || (t[k - 1] < (1LL << 32) && t[k] >= (1LL << 32));
    }
    CHECK(not_500 == 0);
  }
  CHECK(crossed);  // the unwrapped times passed 2^32 inside a run
}

TEST_CASE("the rig vanishes during record: a one-line error, the open run kept as interrupted") {
  Bench b;
  // Unplugged for good 1.2 s after start: during the spin-up or the coast-down.
  Child sim(b.Sim({"--fault-vanish-at", "1.2", "--fault-vanish-for", "0"}), b.dir.File("sim.log"));
  REQUIRE(WaitForPath(b.link));
  CommandResult r = b.Record({"--plan", "quick"});
  INFO(r.out << r.err);
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("rotorbench: error: ") != std::string::npos);
  CHECK(r.err.find("vanished") != std::string::npos);
  auto db = storage::Database::Open(b.db);
  auto runs = db->ListRuns();
  REQUIRE(!runs->empty());
  const storage::Run& last = runs->back();
  CHECK(last.status == storage::RunStatus::kInterrupted);
  CHECK(last.sample_count > 100);  // what arrived before the unplug is kept
}
