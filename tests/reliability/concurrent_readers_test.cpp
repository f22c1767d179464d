// Promise 4 (docs/design.md): readers never fail because the logger is writing, and see
// a consistent run. The daemon logs a simulated rig at 20 kHz into the database while two
// loops run the real binary's read commands against the same file: report, curves, qa
// check and qa batch on a motor with a stored fit, and run list, run show and export of
// the runs being written. Every command must succeed (no "database is locked" reaching the
// user), an export must hold exactly the samples its run record counts (one snapshot), and
// a run once complete never changes.
#include <doctest/doctest.h>

#include <atomic>
#include <fstream>
#include <map>
#include <mutex>
#include <thread>

// report_fixture.h first: <signal.h> (bench_harness.h) defines a macro named si_value.
#include "tests/report/report_fixture.h"
#include "fit/fit.h"
#include "tests/reliability/bench_harness.h"

using namespace rb;
using namespace rb::testing;

namespace {

void Figure(const std::string& line) {
  if (const char* f = std::getenv("ROTORBENCH_FIGURES"); f && *f) std::ofstream(f, std::ios::app) << line << "\n";
}

/// Runs of a simulated motor imported for `label`, and a fit of it stored (the simulator's
/// truth with 1 % uncertainties, as the report tests do); returns the fit id.
std::int64_t StoreMotorWithFit(const std::string& db_path, const std::string& label) {
  auto db = storage::Database::Open(db_path);
  REQUIRE(db.ok());
  auto motor = db->FindMotor(label);
  REQUIRE(motor.ok());
  REQUIRE(db->AddMotor("Q1", "lot-7", "").ok());  // a batch for qa batch
  const report::ReportInput in = SimulatedReportInput(
      {{model::RunKind::kLocked, 2.0, 0.2}, {model::RunKind::kSpinUp, 6.0, 0.6}, {model::RunKind::kCoastDown, 6.0, 20}},
      false);
  fit::FitSummary s = in.fits[0].summary;
  s.motor = label;
  s.runs.clear();
  for (const report::ReportRun& r : in.runs) {
    storage::NewRun nr;
    nr.motor_id = motor->id;
    nr.kind = r.record.kind;
    nr.started_utc = r.record.started_utc;
    nr.source = "sim";
    nr.nominal_voltage = r.record.nominal_voltage;
    nr.meta_json = r.record.meta_json;
    Result<std::int64_t> id = db->ImportRun(nr, r.samples);
    REQUIRE(id.ok());
    fit::RunFit rf;
    rf.run_id = *id;
    rf.kind = r.record.kind;
    rf.nominal_voltage = *r.record.nominal_voltage;
    s.runs.push_back(rf);
  }
  Result<std::int64_t> fit_id = fit::StoreFit(*db, s);
  REQUIRE(fit_id.ok());
  fit::FitSummary q = s;
  q.motor = "Q1";
  REQUIRE(fit::StoreFit(*db, q).ok());
  return *fit_id;
}

/// Failures seen by the reader threads (doctest's CHECK is not thread-safe).
struct Findings {
  std::mutex mu;
  std::vector<std::string> failures;
  std::map<std::string, int> calls;
  void Call(const std::string& what) {
    std::lock_guard<std::mutex> l(mu);
    ++calls[what];
  }
  void Fail(const std::string& what) {
    std::lock_guard<std::mutex> l(mu);
    failures.push_back(what);
  }
};

void Expect(Findings* f, const std::string& what, const CommandResult& r) {
  f->Call(what);
  if (r.exit_code != 0) f->Fail(what + ": exit " + std::to_string(r.exit_code) + ": " + r.err);
}

}  // namespace

TEST_CASE("readers while the daemon logs at 20 kHz: report, qa, run list, export never fail and see whole runs") {
  const double seconds = TierCount(8, 90);
  RigBench b;
  const std::int64_t fit_id = StoreMotorWithFit(b.db, "M1");
  const std::string spec = Fixture("specs/demo-6v.toml");
  // Short cycles: runs begin and end all the time while the readers read.
  b.StartRig({"--auto-cycle", "0.8,0.4", "--adc-rate", "20000", "--friction", "2", "--max-seconds",
              std::to_string(seconds + 60)});
  b.StartDaemon();
  REQUIRE(b.WaitForOpenRun(1, 10));

  Findings f;
  std::atomic<bool> done{false};
  const std::string html = b.dir.File("report.html");
  std::thread outputs([&] {
    while (!done) {
      Expect(&f, "report", RunRotorbench({"--db", b.db, "report", "--motor", "M1", "--out", html}));
      Expect(&f, "curves", RunRotorbench({"--db", b.db, "curves", "--fit", std::to_string(fit_id), "--json"}));
      Expect(&f, "qa check", RunRotorbench({"--db", b.db, "qa", "check", "--spec", spec, "--motor", "M1", "--json"}));
      Expect(&f, "qa batch", RunRotorbench({"--db", b.db, "qa", "batch", "--spec", spec, "--batch", "lot-7"}));
    }
  });
  std::map<std::int64_t, std::int64_t> closed;  // run id → sample count once complete
  std::thread runs([&] {
    while (!done) {
      CommandResult list = RunRotorbench({"--db", b.db, "run", "list", "--json"});
      Expect(&f, "run list", list);
      if (list.exit_code != 0) continue;
      const auto arr = nlohmann::json::parse(list.out);
      std::int64_t newest = 0;
      for (const auto& r : arr) {
        const std::int64_t id = r["id"], n = r["samples"];
        newest = std::max(newest, id);
        if (r["status"] == "recording") continue;
        auto [it, fresh] = closed.emplace(id, n);
        if (!fresh && it->second != n) {
          f.Fail("run " + std::to_string(id) + " changed after it closed: " + std::to_string(it->second) + " → " +
                 std::to_string(n) + " samples");
        }
      }
      CommandResult ex = RunRotorbench({"--db", b.db, "export", "--run", std::to_string(newest), "--format", "json"});
      Expect(&f, "export", ex);
      if (ex.exit_code == 0) {
        const auto j = nlohmann::json::parse(ex.out);
        const std::size_t counted = j["run"]["samples"], held = j["samples"]["time_s"].size();
        if (counted != held) {
          f.Fail("export of run " + std::to_string(newest) + " (" + j["run"]["status"].get<std::string>() +
                 "): the run record counts " + std::to_string(counted) + " samples, the export holds " +
                 std::to_string(held));
        }
      }
      Expect(&f, "run show", RunRotorbench({"--db", b.db, "run", "show", std::to_string(newest), "--json"}));
    }
  });
  std::this_thread::sleep_for(std::chrono::duration<double>(seconds));
  done = true;
  outputs.join();
  runs.join();
  auto st = b.Status();
  REQUIRE(st);
  const std::uint64_t logged = (*st)["ports"][0]["samples"];
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();

  int total = 0;
  std::string counts;
  for (const auto& [what, n] : f.calls) {
    total += n;
    counts += (counts.empty() ? "" : ", ") + what + " " + std::to_string(n);
  }
  for (const std::string& s : f.failures) FAIL_CHECK(s);
  CHECK(f.failures.empty());
  CHECK(f.calls["report"] >= 1);
  CHECK(f.calls["export"] >= 2);
  CHECK(closed.size() >= 2);
  // The daemon's log never had to wait for a reader either.
  CHECK(ReadFile(b.DaemonLog(1)).find("commit delayed") == std::string::npos);
  MESSAGE("concurrent readers: " << total << " commands in " << seconds << " s (" << counts << ") while the daemon "
                                 << "logged " << logged << " ADC samples; " << f.failures.size() << " failures");
  Figure("readers seconds=" + std::to_string(seconds) + " commands=" + std::to_string(total) +
         " failures=" + std::to_string(f.failures.size()) + " daemon_samples=" + std::to_string(logged));
}
