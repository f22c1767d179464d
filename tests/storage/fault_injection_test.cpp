// Storage under injected I/O faults (the pattern of SQLite's own fault-simulation tests):
// for every N, the Nth write / sync / truncate of a logging scenario fails, and so does
// every later one (the disk went away). Then the database is reopened on a healthy disk.
// Promises checked after each fault (docs/design.md, "Promises"):
//   - the file opens and PRAGMA integrity_check says ok;
//   - every batch whose commit was acknowledged is present, exactly, in order;
//   - nothing partial: the run holds whole batches only;
//   - a run left recording is marked interrupted, its samples kept.
#include <doctest/doctest.h>

#include <climits>
#include <cmath>
#include <filesystem>

#include "storage/storage.h"
#include "tests/storage/fault_vfs.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::storage;
using namespace rb::testing;

namespace {

// The quick tier: 12 commits of 150 samples (~ a 250 ms commit at 600 samples/s). The long
// tier (scripts/stress): 80 commits of 1,500 samples (20 kHz at 75 ms), enough WAL frames
// for SQLite's automatic checkpoint (1,000 pages) to run inside the scenario, so its writes,
// syncs and truncates fail in turn too.
const int kBatches = LongTier() ? 80 : 12;
const int kBatchSize = LongTier() ? 1500 : 150;

model::Sample SampleAt(int k) {
  const double t = k * 1e-3;
  return {t, k % 5 == 0 ? 800.0 + k : NAN, 0.2 + 1e-5 * k, 6.0 - 1e-6 * k};
}

struct Outcome {
  int acked = 0;          // batches whose Commit() returned ok
  bool finished = false;  // FinishRun acknowledged
};

/// The logger's write pattern: a motor, a run, then one transaction per batch.
Outcome Scenario(const std::string& path) {
  Outcome o;
  auto db = Database::Open(path);
  if (!db.ok()) return o;
  auto motor = db->AddMotor("m", "", "");
  if (!motor.ok()) return o;
  NewRun nr;
  nr.motor_id = *motor;
  nr.started_utc = "2026-12-01T00:00:00.000Z";
  auto run = db->BeginRun(nr);
  if (!run.ok()) return o;
  for (int b = 0; b < kBatches; ++b) {
    std::vector<model::Sample> batch;
    for (int k = 0; k < kBatchSize; ++k) batch.push_back(SampleAt(b * kBatchSize + k));
    Status s = db->Begin();
    if (s.ok()) s = db->AppendSamples(*run, batch);
    if (s.ok()) s = db->Commit();
    if (!s.ok()) {
      db->Rollback().ok();
      return o;  // a logger would now close the run as interrupted, or die
    }
    o.acked = b + 1;
  }
  o.finished = db->FinishRun(*run, RunStatus::kComplete, "2026-12-01T00:00:01.000Z").ok();
  return o;
}

bool Same(double a, double b) { return (std::isnan(a) && std::isnan(b)) || a == b; }

void CheckAfterFault(const std::string& path, const Outcome& o) {
  auto db = Database::Open(path);
  REQUIRE(db.ok());
  CHECK(db->IntegrityCheck().ok());
  REQUIRE(db->MarkStaleRunsInterrupted("2026-12-01T00:02:00.000Z").ok());
  auto runs = db->ListRuns();
  REQUIRE(runs.ok());
  if (runs->empty()) {
    CHECK(o.acked == 0);
    return;
  }
  REQUIRE(runs->size() == 1);
  auto samples = db->ReadSamples(runs->front().id);
  REQUIRE(samples.ok());
  const int n = static_cast<int>(samples->size());
  CHECK(n % kBatchSize == 0);                   // whole batches only
  CHECK(n >= o.acked * kBatchSize);             // every acknowledged sample survived
  CHECK(n <= (o.acked + 1) * kBatchSize);       // at most the batch in flight, if its commit
                                                // reached the disk before the error
  bool exact = true;
  for (int k = 0; k < n; ++k) {
    const model::Sample e = SampleAt(k), &a = (*samples)[static_cast<size_t>(k)];
    exact = exact && Same(e.t, a.t) && Same(e.speed, a.speed) && Same(e.current, a.current) &&
            Same(e.voltage, a.voltage);
  }
  CHECK(exact);
  CHECK(runs->front().sample_count == n);
  if (!o.finished) CHECK(runs->front().status != RunStatus::kRecording);
}

void Sweep(FaultKind kind, const char* name) {
  // Faults are injected above the file system, so a RAM disk tests the same thing without
  // paying for real fsyncs hundreds of times.
  TempDir dir(TempDir::kPreferRamDisk);
  InstallFaultVfs();
  // Count the operations of a clean run of the scenario.
  ArmFault(kind, INT_MAX);
  const std::string clean = dir.File("clean.db");
  const Outcome ok = Scenario(clean);
  REQUIRE(ok.acked == kBatches);
  const int total = FaultOpsCounted(kind);
  DisarmFault();
  INFO(std::string(name) << " operations in the scenario: " << total);
  REQUIRE(total > 0);
  int fired = 0;
  for (int n = 1; n <= total; ++n) {
    CAPTURE(n);
    const std::string path = dir.File(std::string(name) + "-" + std::to_string(n) + ".db");
    ArmFault(kind, n);
    const Outcome o = Scenario(path);
    fired += FaultFired();
    DisarmFault();
    CheckAfterFault(path, o);
    for (const char* suffix : {"", "-wal", "-shm"}) std::filesystem::remove(path + suffix);
  }
  CHECK(fired == total);  // every armed fault actually happened
  UninstallFaultVfs();
}

}  // namespace

TEST_CASE("storage survives the Nth write failing, for every N of a logging scenario") {
  Sweep(FaultKind::kWrite, "write");
}

TEST_CASE("storage survives the Nth sync failing, for every N of a logging scenario") {
  Sweep(FaultKind::kSync, "sync");
}

TEST_CASE("storage survives the Nth truncate failing, for every N of a logging scenario") {
  InstallFaultVfs();
  ArmFault(FaultKind::kTruncate, INT_MAX);
  TempDir dir(TempDir::kPreferRamDisk);
  Scenario(dir.File("probe.db"));
  const int truncates = FaultOpsCounted(FaultKind::kTruncate);
  DisarmFault();
  UninstallFaultVfs();
  if (truncates == 0) {
    MESSAGE("the scenario performs no truncate (WAL mode truncates only at checkpoints)");
  } else {
    Sweep(FaultKind::kTruncate, "truncate");
  }
}
