// Storage: schema creation and migration, refusal of foreign files, runs and samples.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <cmath>
#include <filesystem>

#include "storage/storage.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::storage;
using rb::testing::TempDir;

namespace {
std::vector<model::Sample> Ramp(size_t n, double t0 = 0) {
  std::vector<model::Sample> v;
  for (size_t k = 0; k < n; ++k) {
    const double t = t0 + static_cast<double>(k) * 1e-3;
    v.push_back({t, k % 3 == 0 ? 100.0 + static_cast<double>(k) : NAN, 0.5 + 1e-4 * k,
                 k % 2 ? NAN : 6.0});
  }
  return v;
}

bool SameSample(const model::Sample& a, const model::Sample& b) {
  auto same = [](double x, double y) { return (std::isnan(x) && std::isnan(y)) || x == y; };
  return same(a.t, b.t) && same(a.speed, b.speed) && same(a.current, b.current) &&
         same(a.voltage, b.voltage);
}
}  // namespace

TEST_CASE("a new file gets the current schema, WAL and our application id") {
  TempDir dir;
  auto db = Database::Open(dir.File("a.db"));
  REQUIRE(db.ok());
  CHECK(db->schema_version() == kSchemaVersion);
  CHECK(db->backup_path().empty());  // nothing to back up on a new file
  CHECK(db->IntegrityCheck().ok());
  sqlite3* raw = nullptr;
  REQUIRE(sqlite3_open(dir.File("a.db").c_str(), &raw) == SQLITE_OK);
  sqlite3_stmt* st = nullptr;
  sqlite3_prepare_v2(raw, "PRAGMA journal_mode", -1, &st, nullptr);
  REQUIRE(sqlite3_step(st) == SQLITE_ROW);
  CHECK(std::string(reinterpret_cast<const char*>(sqlite3_column_text(st, 0))) == "wal");
  sqlite3_finalize(st);
  sqlite3_prepare_v2(raw, "PRAGMA application_id", -1, &st, nullptr);
  REQUIRE(sqlite3_step(st) == SQLITE_ROW);
  CHECK(sqlite3_column_int(st, 0) == kApplicationId);
  sqlite3_finalize(st);
  sqlite3_close(raw);
}

TEST_CASE("an older schema is backed up, then migrated, the data survives") {
  TempDir dir;
  const std::string path = dir.File("old.db");
  {
    OpenOptions o;
    o.target_version = 1;
    auto db = Database::Open(path, o);
    REQUIRE(db.ok());
    CHECK(db->schema_version() == 1);
    REQUIRE(db->AddMotor("m1", "b", "n").ok());
  }
  auto db = Database::Open(path);
  REQUIRE(db.ok());
  CHECK(db->schema_version() == kSchemaVersion);
  REQUIRE_FALSE(db->backup_path().empty());
  CHECK(std::filesystem::exists(db->backup_path()));
  CHECK(db->FindMotor("m1").ok());
  // The backup is the old file: version 1, with the motor.
  OpenOptions ro;
  ro.read_only = true;
  auto bak = Database::Open(db->backup_path(), ro);
  CHECK_FALSE(bak.ok());  // read-only refuses to migrate, and says so
  CHECK(bak.status().message().find("needs migrating") != std::string::npos);
  OpenOptions v1;
  v1.target_version = 1;
  auto bak1 = Database::Open(db->backup_path(), v1);
  REQUIRE(bak1.ok());
  CHECK(bak1->schema_version() == 1);
  CHECK(bak1->FindMotor("m1").ok());
}

TEST_CASE("a newer schema is refused with a clear message") {
  TempDir dir;
  const std::string path = dir.File("new.db");
  REQUIRE(Database::Open(path).ok());
  sqlite3* raw = nullptr;
  REQUIRE(sqlite3_open(path.c_str(), &raw) == SQLITE_OK);
  REQUIRE(sqlite3_exec(raw, "PRAGMA user_version = 99", nullptr, nullptr, nullptr) == SQLITE_OK);
  sqlite3_close(raw);
  auto db = Database::Open(path);
  REQUIRE_FALSE(db.ok());
  CHECK(db.status().message().find("schema version 99 is newer") != std::string::npos);
}

TEST_CASE("files that are not ours are refused, untouched") {
  TempDir dir;
  const std::string text = dir.File("notes.txt");
  rb::testing::WriteFile(text, "this is not a database, just some text that is long enough\n");
  auto a = Database::Open(text);
  REQUIRE_FALSE(a.ok());
  CHECK(a.status().message() ==
        text + ": not a rotorbench database (not an SQLite file); expected a file made by "
               "rotorbench, or a new path");
  CHECK(rb::testing::ReadFile(text) ==
        "this is not a database, just some text that is long enough\n");

  const std::string other = dir.File("other.db");
  sqlite3* raw = nullptr;
  REQUIRE(sqlite3_open(other.c_str(), &raw) == SQLITE_OK);
  REQUIRE(sqlite3_exec(raw, "CREATE TABLE t(x)", nullptr, nullptr, nullptr) == SQLITE_OK);
  sqlite3_close(raw);
  auto b = Database::Open(other);
  REQUIRE_FALSE(b.ok());
  CHECK(b.status().message().find("not a rotorbench database") != std::string::npos);

  OpenOptions no_create;
  no_create.create_if_missing = false;
  auto c = Database::Open(dir.File("missing.db"), no_create);
  REQUIRE_FALSE(c.ok());
  CHECK(c.status().code() == Code::kNotFound);
  CHECK_FALSE(std::filesystem::exists(dir.File("missing.db")));
}

TEST_CASE("motor labels are unique and looked up by label") {
  TempDir dir;
  auto db = Database::Open(dir.File("m.db"));
  REQUIRE(db.ok());
  REQUIRE(db->AddMotor("A-01", "lot7", "").ok());
  auto dup = db->AddMotor("A-01", "", "");
  REQUIRE_FALSE(dup.ok());
  CHECK(dup.status().message() == "motor 'A-01' already exists; labels are unique");
  CHECK(db->FindMotor("A-01")->batch == "lot7");
  CHECK(db->FindMotor("nope").status().code() == Code::kNotFound);
  // Labels are data: quotes and SQL do nothing.
  REQUIRE(db->AddMotor("x'); DROP TABLE motors; --", "", "").ok());
  CHECK(db->ListMotors()->size() == 2);
}

TEST_CASE("samples come back exactly, in order, across chunk boundaries and appends") {
  TempDir dir;
  auto db = Database::Open(dir.File("s.db"));
  REQUIRE(db.ok());
  auto motor = db->AddMotor("m", "", "");
  REQUIRE(motor.ok());
  NewRun nr;
  nr.motor_id = *motor;
  nr.started_utc = "2026-12-01T00:00:00.000Z";
  auto run = db->BeginRun(nr);
  REQUIRE(run.ok());
  const auto all = Ramp(3 * kMaxChunkSamples + 17);
  const size_t cut = kMaxChunkSamples + 5;
  REQUIRE(db->AppendSamples(*run, std::span(all).first(cut)).ok());
  REQUIRE(db->AppendSamples(*run, std::span(all).subspan(cut)).ok());
  // Appending something older than what is stored is refused.
  CHECK_FALSE(db->AppendSamples(*run, std::span(all).first(1)).ok());
  REQUIRE(db->FinishRun(*run, RunStatus::kComplete, "2026-12-01T00:00:10.000Z").ok());
  auto back = db->ReadSamples(*run);
  REQUIRE(back.ok());
  REQUIRE(back->size() == all.size());
  bool same = true;
  for (size_t k = 0; k < all.size(); ++k) same = same && SameSample(all[k], (*back)[k]);
  CHECK(same);
  auto r = db->GetRun(*run);
  REQUIRE(r.ok());
  CHECK(r->sample_count == static_cast<std::int64_t>(all.size()));
  CHECK(r->duration_s == all.back().t);
  CHECK(r->status == RunStatus::kComplete);
}

TEST_CASE("ImportRun stores nothing when any part fails") {
  TempDir dir;
  auto db = Database::Open(dir.File("i.db"));
  REQUIRE(db.ok());
  NewRun nr;
  nr.motor_id = 42;  // no such motor: the foreign key refuses the run
  nr.started_utc = "2026-12-01T00:00:00.000Z";
  const auto s = Ramp(10);
  CHECK_FALSE(db->ImportRun(nr, s).ok());
  CHECK(db->ListRuns()->empty());
  // And the connection is usable afterwards.
  auto m = db->AddMotor("m", "", "");
  REQUIRE(m.ok());
  nr.motor_id = *m;
  CHECK(db->ImportRun(nr, s).ok());
  CHECK(db->ListRuns()->size() == 1);
}

TEST_CASE("runs left recording by a dead logger are marked interrupted, samples kept") {
  TempDir dir;
  const std::string path = dir.File("r.db");
  std::int64_t run_id = 0;
  {
    auto db = Database::Open(path);
    REQUIRE(db.ok());
    auto m = db->AddMotor("m", "", "");
    NewRun nr;
    nr.motor_id = *m;
    nr.started_utc = "2026-12-01T00:00:00.000Z";
    run_id = *db->BeginRun(nr);
    REQUIRE(db->AppendSamples(run_id, Ramp(100)).ok());
  }  // "crash": never finished
  auto db = Database::Open(path);
  REQUIRE(db.ok());
  CHECK(db->GetRun(run_id)->status == RunStatus::kRecording);
  CHECK(*db->MarkStaleRunsInterrupted("2026-12-01T00:01:00.000Z") == 1);
  CHECK(db->GetRun(run_id)->status == RunStatus::kInterrupted);
  CHECK(db->ReadSamples(run_id)->size() == 100);
}

TEST_CASE("fits, plans and calibrations are stored and linked") {
  TempDir dir;
  auto db = Database::Open(dir.File("f.db"));
  REQUIRE(db.ok());
  auto m = db->AddMotor("m", "", "");
  NewRun nr;
  nr.motor_id = *m;
  nr.started_utc = "t";
  auto run = db->ImportRun(nr, Ramp(5));
  REQUIRE(run.ok());
  FitRecord f{0, *m, "2026-12-01T00:00:00.000Z", "basic", "0.1.0", {*run}, R"({"x":1})"};
  auto fid = db->AddFit(f);
  REQUIRE(fid.ok());
  auto back = db->GetFit(*fid);
  REQUIRE(back.ok());
  CHECK(back->run_ids == std::vector<std::int64_t>{*run});
  CHECK(back->result_json == R"({"x":1})");
  CalibrationRecord c;
  c.instrument = "rig-7";
  c.channel = "current";
  c.gain = 1.01;
  c.gain_u = 0.002;
  c.created_utc = "2026-12-01T00:00:00.000Z";
  auto cid = db->AddCalibration(c);
  REQUIRE(cid.ok());
  REQUIRE(db->LinkRunCalibration(*run, *cid).ok());
  CHECK(db->RunCalibrations(*run)->at(0).gain == 1.01);
  CHECK((*db->LatestCalibration("rig-7", "current"))->id == *cid);
  CHECK_FALSE(db->LatestCalibration("rig-7", "voltage")->has_value());
  c.channel = "torque";  // not a channel we know: the schema refuses it
  CHECK_FALSE(db->AddCalibration(c).ok());
}

TEST_CASE("sample chunk codec: exact round trip and corruption detection") {
  const auto s = Ramp(50);
  const std::string blob = EncodeSampleChunk(s);
  CHECK(blob.size() == 50 * 32);
  std::vector<model::Sample> back;
  REQUIRE(DecodeSampleChunk(blob, &back).ok());
  REQUIRE(back.size() == s.size());
  for (size_t k = 0; k < s.size(); ++k) CHECK(SameSample(s[k], back[k]));
  back.clear();
  CHECK(DecodeSampleChunk(std::string_view(blob).substr(0, 33), &back).code() == Code::kCorruption);
}

TEST_CASE("a read transaction sees one snapshot: a run record and its samples agree while a writer appends") {
  TempDir dir;
  const std::string path = dir.File("r.db");
  auto w = Database::Open(path);
  REQUIRE(w.ok());
  auto motor = w->AddMotor("m", "", "");
  REQUIRE(motor.ok());
  NewRun nr;
  nr.motor_id = *motor;
  nr.started_utc = "2026-12-01T00:00:00.000Z";
  auto run = w->BeginRun(nr);
  REQUIRE(run.ok());
  const auto all = Ramp(300);
  REQUIRE(w->AppendSamples(*run, std::span(all).first(100)).ok());
  OpenOptions ro;
  ro.read_only = true;
  auto r = Database::Open(path, ro);
  REQUIRE(r.ok());
  REQUIRE(r->BeginRead().ok());
  auto before = r->GetRun(*run);
  REQUIRE(before.ok());
  CHECK(before->sample_count == 100);
  // The writer commits 200 more samples between the reader's two reads.
  REQUIRE(w->AppendSamples(*run, std::span(all).subspan(100)).ok());
  auto samples = r->ReadSamples(*run);
  REQUIRE(samples.ok());
  CHECK(samples->size() == 100);  // the same snapshot as the run record
  REQUIRE(r->EndRead().ok());
  auto after = r->ReadSamples(*run);
  REQUIRE(after.ok());
  CHECK(after->size() == 300);  // a new read sees the commit
}
