// rotorbench acquire: one run being recorded, written in small transactions.
//
// Samples arrive with stream times (seconds on the acquisition's own clock); the writer
// shifts them to run time (0 = the moment the run began), buffers them, and Flush()
// commits samples and events in one transaction (callers flush at least every 250 ms).
// Finish() closes the run as complete or interrupted, keeping every sample. Begin()
// links the newest calibration of each instrument channel to the run. Not thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "model/sample.h"
#include "storage/storage.h"

namespace rb::acquire {

class RunWriter {
 public:
  explicit RunWriter(storage::Database* db) : db_(db) {}

  /// Starts a run whose time 0 is stream time t0; links the latest calibrations of
  /// `instruments` (channels current, voltage, speed) to it.
  Status Begin(const storage::NewRun& run, double t0, const std::vector<std::string>& instruments);
  bool open() const { return run_id_ > 0; }
  std::int64_t run_id() const { return run_id_; }
  double t0() const { return t0_; }

  /// A sample at stream time s.t (later than every earlier one).
  void Add(model::Sample s);
  void AddEvent(double stream_t, std::string kind, std::string detail);
  /// Commits what is buffered (one transaction).
  Status Flush();
  /// Flushes, adds an "end" event with the reason, and closes the run.
  Status Finish(storage::RunStatus status, const std::string& reason, double stream_t);

  std::size_t samples() const { return total_; }
  /// Samples of this run whose commit has been acknowledged (they survive a crash).
  std::size_t committed() const { return committed_; }
  double last_t() const { return last_t_; }  ///< run time of the newest sample

 private:
  storage::Database* db_;
  std::int64_t run_id_ = 0;
  double t0_ = 0;
  std::vector<model::Sample> pending_;
  std::vector<storage::RunEvent> events_;
  std::size_t total_ = 0, committed_ = 0;
  double last_t_ = 0;
};

}  // namespace rb::acquire
