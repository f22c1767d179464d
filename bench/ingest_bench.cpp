// Ingest throughput: rig link bytes → decoded frames → samples → SQLite through the
// logger's own writer (acquire::RunWriter, real schema, synchronous=FULL as the daemon
// opens it, one commit per 100 ms of wall time, the daemon's default commit interval),
// against the raw rate of one prepared INSERT per sample row with the same pragmas and the
// same commit policy (the physical limit of SQLite on this machine), same run.
// Also the database size per hour of logging at 1,000 samples/s.
//   ingest_bench [N samples] [repeats] [dir]
#include <sqlite3.h>
#include <sys/stat.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>
#include <vector>

#include "acquire/rig_link.h"
#include "acquire/run_writer.h"
#include "bench/bench_util.h"
#include "storage/storage.h"

using namespace rb;
using Clock = std::chrono::steady_clock;

namespace {

constexpr double kCommitInterval = 0.1;  // the daemon's default (acquire/daemon.h)

Clock::time_point NextCommit() {
  return Clock::now() +
         std::chrono::duration_cast<Clock::duration>(std::chrono::duration<double>(kCommitInterval));
}

/// Frames like the rig's: 10 ms of 2 kHz ADC records and a few tach marks each.
std::vector<std::uint8_t> Stream(std::size_t samples) {
  std::vector<std::uint8_t> w;
  std::mt19937 rng(1);
  std::uint32_t t = 0;
  std::uint16_t seq = 0;
  acquire::IdentifyMsg id;  // the host keeps no sample before the rig has identified itself
  id.serial = 1;
  id.adc_rate_mhz = 2000000;
  id.tach_resolution_ns = 1000;
  id.marks_per_rev = 2;
  id.output_full_scale = 1000;
  id.current_scale = 1e-3f;
  id.voltage_scale = 4e-3f;
  id.supply_volts = 6;
  id.name = "bench";
  acquire::EncodeFrame(seq++, t, id, &w);
  for (std::size_t n = 0; n < samples; n += 20) {
    acquire::SamplesMsg m;
    m.t_base_us = t;
    m.output_level = 1000;
    for (int k = 0; k < 20; ++k) {
      m.adc.push_back({static_cast<std::uint16_t>(k * 500), static_cast<std::int16_t>(rng() % 4000),
                       static_cast<std::int16_t>(rng() % 2000)});
    }
    for (int k = 0; k < 3; ++k) m.marks_dt_us.push_back(static_cast<std::uint16_t>(k * 3300 + rng() % 100));
    acquire::EncodeFrame(seq++, t, m, &w);
    t += 10000;
  }
  return w;
}

void Remove(const std::string& path) {
  for (const char* suffix : {"", "-wal", "-shm"}) unlink((path + suffix).c_str());
}

struct Ingest {
  double rate = 0;            // samples/s
  std::size_t stored = 0;
  double bytes_per_sample = 0;
};

/// The chosen path: RigLink decodes, samples go through RunWriter.
Ingest ThroughLogger(const std::string& path, const std::vector<std::uint8_t>& wire) {
  Remove(path);
  storage::OpenOptions oo;
  oo.synchronous_full = true;
  Ingest out;
  {
    Result<storage::Database> db = storage::Database::Open(path, oo);
    if (!db.ok()) {
      std::fprintf(stderr, "%s\n", db.status().message().c_str());
      std::exit(1);
    }
    const std::int64_t motor = *db->AddMotor("bench-01", "", "");
    acquire::ScriptedByteSource port("bench");
    for (std::size_t at = 0; at < wire.size(); at += 4096) {
      port.AddBytes({wire.begin() + static_cast<std::ptrdiff_t>(at),
                     wire.begin() + static_cast<std::ptrdiff_t>(std::min(wire.size(), at + 4096))});
    }
    acquire::RigLink link(&port);
    acquire::RunWriter writer(&*db);
    storage::NewRun run;
    run.motor_id = motor;
    run.kind = model::RunKind::kSteady;
    run.started_utc = "2026-01-01T00:00:00Z";
    if (Status s = writer.Begin(run, 0, {}); !s.ok()) {
      std::fprintf(stderr, "%s\n", s.message().c_str());
      std::exit(1);
    }
    const double secs = bench::TimeIt([&] {
      auto next_commit = NextCommit();
      for (std::size_t reads = 0; reads * 4096 < wire.size() + 4096; ++reads) {
        if (!link.Poll(0).ok()) break;
        acquire::RigData d = link.TakeData();
        std::size_t mark = 0;
        for (const acquire::AdcReading& a : d.adc) {
          model::Sample s{static_cast<double>(a.t_us) * 1e-6, NAN, a.current, a.voltage};
          // A speed reading at each tach mark, as the logger merges them.
          if (mark < d.marks_us.size() && d.marks_us[mark] <= a.t_us) {
            s.speed = 900.0;
            ++mark;
          }
          writer.Add(s);
        }
        if (Clock::now() >= next_commit) {
          if (!writer.Flush().ok()) std::exit(1);
          next_commit = NextCommit();
        }
      }
      if (!writer.Finish(storage::RunStatus::kComplete, "bench", writer.last_t()).ok()) std::exit(1);
    });
    out.stored = writer.samples();
    out.rate = static_cast<double>(out.stored) / secs;
  }
  struct stat st{};
  stat(path.c_str(), &st);  // closed: the WAL is checkpointed into the file
  out.bytes_per_sample = static_cast<double>(st.st_size) / static_cast<double>(out.stored);
  return out;
}

/// The baseline: one row per sample, one prepared INSERT, same pragmas, same commit policy.
double RawRows(const std::string& path, std::size_t n, double* bytes_per_sample) {
  Remove(path);
  sqlite3* db = nullptr;
  sqlite3_open(path.c_str(), &db);
  sqlite3_exec(db, "PRAGMA journal_mode=WAL; PRAGMA synchronous=FULL;"
               "CREATE TABLE samples(run_id INTEGER, t REAL, speed REAL, current REAL, voltage REAL)",
               nullptr, nullptr, nullptr);
  sqlite3_stmt* st = nullptr;
  sqlite3_prepare_v2(db, "INSERT INTO samples VALUES(1, ?1, ?2, ?3, ?4)", -1, &st, nullptr);
  const double secs = bench::TimeIt([&] {
    auto next_commit = NextCommit();
    sqlite3_exec(db, "BEGIN", nullptr, nullptr, nullptr);
    for (std::size_t k = 0; k < n; ++k) {
      sqlite3_bind_double(st, 1, static_cast<double>(k) * 5e-4);
      if (k % 7 == 0) sqlite3_bind_double(st, 2, 900.0); else sqlite3_bind_null(st, 2);
      sqlite3_bind_double(st, 3, 0.1);
      sqlite3_bind_double(st, 4, 5.9);
      sqlite3_step(st);
      sqlite3_reset(st);
      if ((k & 255) == 0 && Clock::now() >= next_commit) {
        sqlite3_exec(db, "COMMIT; BEGIN", nullptr, nullptr, nullptr);
        next_commit = NextCommit();
      }
    }
    sqlite3_exec(db, "COMMIT", nullptr, nullptr, nullptr);
  });
  sqlite3_finalize(st);
  sqlite3_close(db);
  struct stat fs{};
  stat(path.c_str(), &fs);
  *bytes_per_sample = static_cast<double>(fs.st_size) / static_cast<double>(n);
  return static_cast<double>(n) / secs;
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoul(argv[1], nullptr, 10) : 1000000;
  const int repeats = argc > 2 ? std::atoi(argv[2]) : 5;
  const std::string dir = argc > 3 ? argv[3] : "/tmp";
  bench::PrintMethod("ingest: rig frames decoded and logged through RunWriter vs raw SQLite rows");
  std::printf("# N = %zu samples per repetition, %d repetitions; both WAL + synchronous=FULL, "
              "one commit per %.0f ms of wall time; files in %s\n",
              n, repeats, kCommitInterval * 1e3, dir.c_str());
  const std::vector<std::uint8_t> wire = Stream(n);
  std::vector<double> chosen, raw, bps, raw_bps;
  std::size_t stored = 0;
  for (int k = 0; k < repeats; ++k) {
    double rb = 0;
    raw.push_back(RawRows(dir + "/rb_ingest_raw.db", n, &rb));
    raw_bps.push_back(rb * 3.6e6 / 1e6);  // MB per hour at 1,000 samples/s
    const Ingest in = ThroughLogger(dir + "/rb_ingest.db", wire);
    chosen.push_back(in.rate);
    bps.push_back(in.bytes_per_sample * 3.6e6 / 1e6);
    stored = in.stored;
  }
  Remove(dir + "/rb_ingest_raw.db");
  Remove(dir + "/rb_ingest.db");
  if (stored < n) {
    std::fprintf(stderr, "ingest_bench: stored %zu of %zu samples\n", stored, n);
    return 1;
  }
  const bench::Stats c = bench::Summarise(chosen), r = bench::Summarise(raw);
  bench::PrintRow({"2. ingest: frames → RunWriter → SQLite", std::to_string(n) + " samples", c, "samples/s",
                   "raw prepared INSERT per row", r, "≥ 0.5 × raw", c.median >= 0.5 * r.median});
  const bench::Stats b = bench::Summarise(bps), rb = bench::Summarise(raw_bps);
  bench::PrintRow({"6. database size, 1 h at 1,000 samples/s", "3.6 M samples", b, "MB",
                   "one row per sample", rb, "", true});
  return 0;
}
