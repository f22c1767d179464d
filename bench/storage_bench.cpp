// Sample storage throughput: the chosen layout (chunked blobs through storage/) against
// the raw SQLite insert rate (one prepared INSERT per sample row), same machine, same run.
//   storage_bench [N] [repeats] [dir]
#include <sqlite3.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "bench/bench_util.h"
#include "storage/storage.h"

namespace {

using rb::model::Sample;

std::vector<Sample> MakeSamples(size_t n) {
  std::vector<Sample> v(n);
  for (size_t k = 0; k < n; ++k) {
    const double t = static_cast<double>(k) * 5e-4;
    v[k] = {t, k % 4 == 0 ? 900.0 + std::sin(t) : NAN, 0.1 + 1e-3 * std::cos(t), 5.9};
  }
  return v;
}

/// Raw baseline: rows {run_id, t, speed, current, voltage}, WAL + NORMAL, 1000 rows per
/// transaction, one prepared statement.
double RawRowsInsert(const std::string& path, const std::vector<Sample>& s) {
  unlink(path.c_str());
  sqlite3* db = nullptr;
  sqlite3_open(path.c_str(), &db);
  sqlite3_exec(db, "PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;"
               "CREATE TABLE samples(run_id INTEGER, t REAL, speed REAL, current REAL, voltage REAL)",
               nullptr, nullptr, nullptr);
  sqlite3_stmt* st = nullptr;
  sqlite3_prepare_v2(db, "INSERT INTO samples VALUES(1, ?1, ?2, ?3, ?4)", -1, &st, nullptr);
  const double secs = rb::bench::TimeIt([&] {
    for (size_t k = 0; k < s.size(); ++k) {
      if (k % 1000 == 0) sqlite3_exec(db, "BEGIN", nullptr, nullptr, nullptr);
      sqlite3_bind_double(st, 1, s[k].t);
      if (std::isnan(s[k].speed)) sqlite3_bind_null(st, 2); else sqlite3_bind_double(st, 2, s[k].speed);
      sqlite3_bind_double(st, 3, s[k].current);
      sqlite3_bind_double(st, 4, s[k].voltage);
      sqlite3_step(st);
      sqlite3_reset(st);
      if (k % 1000 == 999 || k + 1 == s.size()) sqlite3_exec(db, "COMMIT", nullptr, nullptr, nullptr);
    }
  });
  sqlite3_finalize(st);
  sqlite3_close(db);
  return static_cast<double>(s.size()) / secs;
}

/// Raw baseline read-back: every row of the run, in time order, into Samples.
double RawRowsRead(const std::string& path, size_t expect) {
  sqlite3* db = nullptr;
  sqlite3_open(path.c_str(), &db);
  sqlite3_stmt* st = nullptr;
  sqlite3_prepare_v2(db, "SELECT t, speed, current, voltage FROM samples WHERE run_id = 1 "
                     "ORDER BY rowid", -1, &st, nullptr);
  std::vector<Sample> out;
  out.reserve(expect);
  const double secs = rb::bench::TimeIt([&] {
    while (sqlite3_step(st) == SQLITE_ROW) {
      out.push_back({sqlite3_column_double(st, 0),
                     sqlite3_column_type(st, 1) == SQLITE_NULL ? NAN : sqlite3_column_double(st, 1),
                     sqlite3_column_double(st, 2), sqlite3_column_double(st, 3)});
    }
  });
  sqlite3_finalize(st);
  sqlite3_close(db);
  if (out.size() != expect) {
    std::fprintf(stderr, "raw read back %zu of %zu rows\n", out.size(), expect);
    std::exit(1);
  }
  return static_cast<double>(out.size()) / secs;
}

struct LayoutResult {
  double insert_rate = 0, read_rate = 0;
};

/// The product path: Database::AppendSamples in transactions of `batch` samples (the
/// logger commits about every 250 ms, i.e. 250–5000 samples), then ReadSamples.
LayoutResult ChunkedThroughStorage(const std::string& path, const std::vector<Sample>& s,
                                   size_t batch) {
  unlink(path.c_str());
  (void)unlink((path + "-wal").c_str());
  auto db = rb::storage::Database::Open(path);
  if (!db.ok()) {
    std::fprintf(stderr, "%s\n", db.status().message().c_str());
    std::exit(1);
  }
  const std::int64_t motor = *db->AddMotor("bench", "", "");
  rb::storage::NewRun nr;
  nr.motor_id = motor;
  nr.started_utc = "2026-01-01T00:00:00.000Z";
  const std::int64_t run = *db->BeginRun(nr);
  LayoutResult r;
  const double ins = rb::bench::TimeIt([&] {
    for (size_t k = 0; k < s.size(); k += batch) {
      const size_t n = std::min(batch, s.size() - k);
      (void)db->Begin();
      (void)db->AppendSamples(run, std::span(s).subspan(k, n));
      (void)db->Commit();
    }
  });
  r.insert_rate = static_cast<double>(s.size()) / ins;
  size_t got = 0;
  const double rd = rb::bench::TimeIt([&] { got = db->ReadSamples(run)->size(); });
  if (got != s.size()) {
    std::fprintf(stderr, "read back %zu of %zu samples\n", got, s.size());
    std::exit(1);
  }
  r.read_rate = static_cast<double>(got) / rd;
  return r;
}

}  // namespace

int main(int argc, char** argv) {
  const size_t n = argc > 1 ? std::strtoul(argv[1], nullptr, 10) : 1000000;
  const int repeats = argc > 2 ? std::atoi(argv[2]) : 5;
  const std::string dir = argc > 3 ? argv[3] : "/tmp";
  rb::bench::PrintMethod("storage: chunked sample blobs via storage/ vs raw SQLite row inserts");
  std::printf("# N = %zu samples per repetition, %d repetitions, WAL + synchronous=NORMAL, "
              "files in %s\n", n, repeats, dir.c_str());
  const auto s = MakeSamples(n);
  std::vector<double> raw, raw_rd, ins1000, ins250, rd;
  for (int k = 0; k < repeats; ++k) {
    raw.push_back(RawRowsInsert(dir + "/rb_bench_raw.db", s));
    raw_rd.push_back(RawRowsRead(dir + "/rb_bench_raw.db", s.size()));
    LayoutResult a = ChunkedThroughStorage(dir + "/rb_bench_chunk.db", s, 1000);
    LayoutResult b = ChunkedThroughStorage(dir + "/rb_bench_chunk250.db", s, 250);
    ins1000.push_back(a.insert_rate);
    ins250.push_back(b.insert_rate);
    rd.push_back(a.read_rate);
  }
  const auto r = rb::bench::Summarise(raw);
  const auto rr = rb::bench::Summarise(raw_rd);
  std::printf("%-52s %12s %12s %12s %8s\n", "measure", "median/s", "min/s", "max/s", "ratio");
  auto row = [&](const char* what, const std::vector<double>& v, double base) {
    const auto x = rb::bench::Summarise(v);
    std::printf("%-52s %12.0f %12.0f %12.0f %8.2f\n", what, x.median, x.min, x.max,
                x.median / base);
  };
  row("baseline: raw SQLite row insert, 1000/txn", raw, r.median);
  row("chosen: chunked insert via storage/, 1000/txn", ins1000, r.median);
  row("chosen: chunked insert via storage/, 250/txn", ins250, r.median);
  row("baseline: raw SQLite rows read back in order", raw_rd, rr.median);
  row("chosen: one run read back in order via storage/", rd, rr.median);
  std::printf("# ratio: insert rows vs the raw insert rate; read rows vs the raw read rate\n");
  const std::string size = std::to_string(n) + " samples";
  rb::bench::PrintRow({"storage: chunked insert via storage/, 1000/txn", size, rb::bench::Summarise(ins1000),
                       "samples/s", "raw prepared INSERT per row", r, "", true});
  rb::bench::PrintRow({"storage: one run read back in order", size, rb::bench::Summarise(rd), "samples/s",
                       "raw rows read in order", rr, "", true});
  for (const char* f : {"rb_bench_raw.db", "rb_bench_chunk.db", "rb_bench_chunk250.db"}) {
    for (const char* suffix : {"", "-wal", "-shm"}) unlink((dir + "/" + f + suffix).c_str());
  }
  return 0;
}
