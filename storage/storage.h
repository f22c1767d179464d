// rotorbench storage: the SQLite database of motors, runs, samples, fits and plans.
//
// The only module that speaks SQL. One file per bench; WAL mode, foreign keys on,
// prepared statements only, a busy timeout so a reader never fails while a logger
// writes. The schema is versioned with PRAGMA user_version; older files are copied to a
// backup and migrated forward, newer files are refused. Samples are stored raw, in SI,
// as chunks of packed little-endian doubles (docs/design.md §storage explains the
// measured choice). Timestamps in records are ISO 8601 UTC text.
// Thread-safety: a Database is used by one thread at a time; open one per thread or
// process — SQLite arbitrates between them.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "base/status.h"
#include "model/params.h"
#include "model/sample.h"

namespace rb::storage {

/// Schema versions this build reads and writes. Never renumber a released version.
inline constexpr int kSchemaVersion = 2;
/// PRAGMA application_id of a rotorbench file ("RBNC").
inline constexpr std::int32_t kApplicationId = 0x52424E43;
/// Samples per stored chunk at most (a run is the concatenation of its chunks).
inline constexpr int kMaxChunkSamples = 4096;

struct OpenOptions {
  /// Create the file and schema when the file does not exist (write commands).
  /// When false, a missing file is an error naming the path.
  bool create_if_missing = true;
  /// Open without write access (never migrates; refuses an out-of-date schema).
  bool read_only = false;
  /// How long a statement waits for a lock held by another connection.
  int busy_timeout_ms = 15000;
  /// Migrate only up to this version (tests build old files with it); 0 = current.
  int target_version = 0;
  /// PRAGMA synchronous: false = NORMAL (WAL: durable at checkpoint, never corrupt),
  /// true = FULL (each commit survives power loss).
  bool synchronous_full = false;
  /// 0 = no limit; else the file may grow to about this many bytes (PRAGMA max_page_count,
  /// this connection only) and writes beyond fail like a full disk (IOError, "... full").
  std::int64_t max_size_bytes = 0;
};

enum class RunStatus { kRecording, kComplete, kInterrupted };
std::string_view RunStatusName(RunStatus s);

struct Motor {
  std::int64_t id = 0;
  std::string label;
  std::string batch;
  std::string notes;
  std::string created_utc;
};

/// Fields of a new run; the id, status and counts are filled in by the database.
struct NewRun {
  std::int64_t motor_id = 0;
  model::RunKind kind = model::RunKind::kSpinUp;
  std::string started_utc;
  std::string source;        ///< "import:FILE", "rig:/dev/ttyACM0", "sim", ...
  std::string supply_note;   ///< free text: "bench PSU 12 V, 2 A limit"
  std::string ambient_note;  ///< free text: "22 °C, still air"
  std::optional<double> ambient_C;        ///< ambient (or winding) temperature [°C]
  std::optional<double> nominal_voltage;  ///< supply setting when V(t) was not logged [V]
  std::string meta_json = "{}";           ///< rig/plan details (JSON object text)
  std::string ended_utc;  ///< ImportRun only: the end time, if known (else started_utc)
};

struct Run {
  std::int64_t id = 0;
  std::int64_t motor_id = 0;
  std::string motor_label;
  model::RunKind kind = model::RunKind::kSpinUp;
  RunStatus status = RunStatus::kRecording;
  std::string started_utc;
  std::string ended_utc;  ///< empty while recording
  std::string source, supply_note, ambient_note;
  std::optional<double> ambient_C, nominal_voltage;
  std::string meta_json;
  std::int64_t sample_count = 0;
  double duration_s = 0;  ///< time of the last sample
};

/// Something that happened during a run: output on/off, limit trip, gap, note.
struct RunEvent {
  std::int64_t run_id = 0;
  double t = 0;       ///< seconds since the run started
  std::string kind;   ///< "output_on", "limit_trip", "gap", ...
  std::string detail;
};

/// A stored fit (the fitter owns the meaning of the JSON).
struct FitRecord {
  std::int64_t id = 0;
  std::int64_t motor_id = 0;
  std::string created_utc;
  std::string model;             ///< model option name, e.g. "basic+brush"
  std::string software_version;
  std::vector<std::int64_t> run_ids;
  std::string result_json;       ///< parameters, covariance, diagnostics
};

/// A stored rewind plan (rewind/ owns the meaning of the JSON).
struct PlanRecord {
  std::int64_t id = 0;
  std::optional<std::int64_t> motor_id;
  std::optional<std::int64_t> baseline_fit_id;
  std::string created_utc;
  std::string plan_json;
};

/// A calibration of one instrument channel: reading_true = gain·(raw − offset).
struct CalibrationRecord {
  std::int64_t id = 0;
  std::string instrument;  ///< rig serial or instrument name
  std::string channel;     ///< "current", "voltage", "speed"
  double gain = 1, gain_u = 0;      ///< and its standard uncertainty (relative, 1σ)
  double offset = 0, offset_u = 0;  ///< SI, and its standard uncertainty
  std::string created_utc;
  std::string method;  ///< how it was obtained
  std::string notes;
};

class Database {
 public:
  /// Opens (and if needed creates or migrates) the database at `path`.
  static Result<Database> Open(const std::string& path, const OpenOptions& options = {});

  Database(Database&&) noexcept;
  Database& operator=(Database&&) noexcept;
  Database(const Database&) = delete;
  Database& operator=(const Database&) = delete;
  ~Database();

  const std::string& path() const;
  int schema_version() const;
  /// The backup written before a migration in this Open, if any.
  const std::string& backup_path() const;

  // ---- Transactions: BEGIN IMMEDIATE ... COMMIT. Nested Begin() is an error.
  Status Begin();
  Status Commit();
  Status Rollback();
  /// A read transaction (BEGIN DEFERRED ... COMMIT): every read until EndRead sees one WAL
  /// snapshot, so a run record and its samples agree while a logger writes.
  Status BeginRead();
  Status EndRead();

  // ---- Motors
  Result<std::int64_t> AddMotor(const std::string& label, const std::string& batch,
                                const std::string& notes);
  Result<Motor> FindMotor(const std::string& label);  ///< NotFound names the label
  Result<Motor> GetMotor(std::int64_t id);
  Result<std::vector<Motor>> ListMotors(const std::string& batch = "");

  // ---- Runs and samples
  Result<std::int64_t> BeginRun(const NewRun& run);
  /// Appends samples (in time order, after those already stored) to a run.
  Status AppendSamples(std::int64_t run_id, std::span<const model::Sample> samples);
  Status FinishRun(std::int64_t run_id, RunStatus status, const std::string& ended_utc);
  Status AddEvent(const RunEvent& event);
  Result<Run> GetRun(std::int64_t id);
  Result<std::vector<Run>> ListRuns(std::optional<std::int64_t> motor_id = std::nullopt);
  Result<std::vector<model::Sample>> ReadSamples(std::int64_t run_id);
  Result<std::vector<RunEvent>> ListEvents(std::int64_t run_id);
  /// Marks runs left 'recording' by a logger that died as 'interrupted'; returns count.
  Result<int> MarkStaleRunsInterrupted(const std::string& ended_utc);
  /// A run with its samples in one transaction; nothing is stored on error.
  Result<std::int64_t> ImportRun(const NewRun& run, std::span<const model::Sample> samples);

  // ---- Fits, plans, calibrations
  Result<std::int64_t> AddFit(const FitRecord& fit);
  Result<FitRecord> GetFit(std::int64_t id);
  Result<std::vector<FitRecord>> ListFits(std::optional<std::int64_t> motor_id = std::nullopt);
  Result<std::int64_t> AddPlan(const PlanRecord& plan);
  Result<PlanRecord> GetPlan(std::int64_t id);
  Result<std::int64_t> AddCalibration(const CalibrationRecord& cal);
  /// The newest calibration of an instrument channel, if any.
  Result<std::optional<CalibrationRecord>> LatestCalibration(const std::string& instrument,
                                                             const std::string& channel);
  Status LinkRunCalibration(std::int64_t run_id, std::int64_t calibration_id);
  Result<std::vector<CalibrationRecord>> RunCalibrations(std::int64_t run_id);

  // ---- Maintenance
  /// PRAGMA integrity_check; ok when SQLite answers "ok".
  Status IntegrityCheck();
  /// Copies the whole database to `dest` with SQLite's online backup.
  Status BackupTo(const std::string& dest);

  struct Impl;

 private:
  explicit Database(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

/// Encodes samples as a chunk blob (n × {t, speed, current, voltage} little-endian f64).
std::string EncodeSampleChunk(std::span<const model::Sample> samples);
/// Decodes a chunk blob; Corruption when the size is not a multiple of 32 bytes.
Status DecodeSampleChunk(std::string_view blob, std::vector<model::Sample>* out);

}  // namespace rb::storage
