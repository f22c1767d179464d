// Motors, runs, samples and run events.
#include <algorithm>
#include <cmath>

#include "storage/sqlite_util.h"
#include "storage/storage.h"

namespace rb::storage {
namespace {

constexpr const char* kRunColumns =
    "r.id, r.motor_id, m.label, r.kind, r.status, r.started_utc, coalesce(r.ended_utc,''), "
    "r.source, r.supply_note, r.ambient_note, r.ambient_c, r.nominal_voltage_v, r.meta_json, "
    "r.sample_count, coalesce(r.last_t, 0)";

RunStatus StatusFromName(const std::string& s) {
  if (s == "complete") return RunStatus::kComplete;
  if (s == "interrupted") return RunStatus::kInterrupted;
  return RunStatus::kRecording;
}

Run RunFromRow(const Stmt& st) {
  Run r;
  r.id = st.Int(0);
  r.motor_id = st.Int(1);
  r.motor_label = st.Text(2);
  r.kind = model::RunKindFromName(st.Text(3)).value_or(model::RunKind::kFree);
  r.status = StatusFromName(st.Text(4));
  r.started_utc = st.Text(5);
  r.ended_utc = st.Text(6);
  r.source = st.Text(7);
  r.supply_note = st.Text(8);
  r.ambient_note = st.Text(9);
  r.ambient_C = st.OptDouble(10);
  r.nominal_voltage = st.OptDouble(11);
  r.meta_json = st.Text(12);
  r.sample_count = st.Int(13);
  r.duration_s = st.Double(14);
  return r;
}

Motor MotorFromRow(const Stmt& st) {
  return Motor{st.Int(0), st.Text(1), st.Text(2), st.Text(3), st.Text(4)};
}

}  // namespace

Result<std::int64_t> Database::AddMotor(const std::string& label, const std::string& batch,
                                        const std::string& notes) {
  if (label.empty()) return Status::InvalidArgument("motor label is empty; expected a name");
  if (FindMotor(label).ok()) {
    return Status::InvalidArgument("motor '" + label + "' already exists; labels are unique");
  }
  Stmt st(*impl_,
          "INSERT INTO motors(label, batch, notes, created_utc) "
          "VALUES(?1, ?2, ?3, strftime('%Y-%m-%dT%H:%M:%fZ','now'))");
  st.Bind(1, std::string_view(label));
  st.Bind(2, std::string_view(batch));
  st.Bind(3, std::string_view(notes));
  RB_RETURN_IF_ERROR(st.Run());
  return static_cast<std::int64_t>(sqlite3_last_insert_rowid(impl_->db));
}

Result<Motor> Database::FindMotor(const std::string& label) {
  Stmt st(*impl_, "SELECT id, label, batch, notes, created_utc FROM motors WHERE label = ?1");
  st.Bind(1, std::string_view(label));
  if (st.Step()) return MotorFromRow(st);
  RB_RETURN_IF_ERROR(st.status());
  return Status::NotFound("motor '" + label + "' not found; add it with `rotorbench motor add " +
                          label + "` or see `rotorbench motor list`");
}

Result<Motor> Database::GetMotor(std::int64_t id) {
  Stmt st(*impl_, "SELECT id, label, batch, notes, created_utc FROM motors WHERE id = ?1");
  st.Bind(1, id);
  if (st.Step()) return MotorFromRow(st);
  RB_RETURN_IF_ERROR(st.status());
  return Status::NotFound("motor id " + std::to_string(id) + " not found");
}

Result<std::vector<Motor>> Database::ListMotors(const std::string& batch) {
  Stmt st(*impl_,
          "SELECT id, label, batch, notes, created_utc FROM motors "
          "WHERE ?1 = '' OR batch = ?1 ORDER BY label");
  st.Bind(1, std::string_view(batch));
  std::vector<Motor> out;
  while (st.Step()) out.push_back(MotorFromRow(st));
  RB_RETURN_IF_ERROR(st.status());
  return out;
}

Result<std::int64_t> Database::BeginRun(const NewRun& run) {
  Stmt st(*impl_,
          "INSERT INTO runs(motor_id, kind, status, started_utc, source, supply_note, "
          "ambient_note, ambient_c, nominal_voltage_v, meta_json) "
          "VALUES(?1, ?2, 'recording', ?3, ?4, ?5, ?6, ?7, ?8, ?9)");
  st.Bind(1, run.motor_id);
  st.Bind(2, model::RunKindName(run.kind));
  st.Bind(3, std::string_view(run.started_utc));
  st.Bind(4, std::string_view(run.source));
  st.Bind(5, std::string_view(run.supply_note));
  st.Bind(6, std::string_view(run.ambient_note));
  st.Bind(7, run.ambient_C);
  st.Bind(8, run.nominal_voltage);
  st.Bind(9, std::string_view(run.meta_json.empty() ? "{}" : run.meta_json));
  RB_RETURN_IF_ERROR(st.Run());
  return static_cast<std::int64_t>(sqlite3_last_insert_rowid(impl_->db));
}

Status Database::AppendSamples(std::int64_t run_id, std::span<const model::Sample> samples) {
  if (samples.empty()) return Status::Ok();
  std::int64_t seq = 0;
  std::optional<double> last_t;
  {
    Stmt st(*impl_,
            "SELECT r.last_t, (SELECT coalesce(max(seq) + 1, 0) FROM sample_chunks "
            "WHERE run_id = r.id) FROM runs r WHERE r.id = ?1");
    st.Bind(1, run_id);
    if (!st.Step()) {
      RB_RETURN_IF_ERROR(st.status());
      return Status::NotFound("run " + std::to_string(run_id) + " not found");
    }
    last_t = st.OptDouble(0);
    seq = st.Int(1);
  }
  if (last_t && samples.front().t < *last_t) {
    return Status::InvalidArgument("run " + std::to_string(run_id) + ": sample at t = " +
                                   std::to_string(samples.front().t) +
                                   " s is before the last stored sample");
  }
  for (size_t begin = 0; begin < samples.size(); begin += kMaxChunkSamples) {
    const size_t n = std::min<size_t>(kMaxChunkSamples, samples.size() - begin);
    const auto chunk = samples.subspan(begin, n);
    Stmt st(*impl_,
            "INSERT INTO sample_chunks(run_id, seq, n, t_first, t_last, data) "
            "VALUES(?1, ?2, ?3, ?4, ?5, ?6)");
    st.Bind(1, run_id);
    st.Bind(2, seq++);
    st.Bind(3, static_cast<std::int64_t>(n));
    st.Bind(4, chunk.front().t);
    st.Bind(5, chunk.back().t);
    st.BindBlob(6, EncodeSampleChunk(chunk));
    RB_RETURN_IF_ERROR(st.Run());
  }
  Stmt up(*impl_,
          "UPDATE runs SET sample_count = sample_count + ?2, last_t = ?3 WHERE id = ?1");
  up.Bind(1, run_id);
  up.Bind(2, static_cast<std::int64_t>(samples.size()));
  up.Bind(3, samples.back().t);
  return up.Run();
}

Status Database::FinishRun(std::int64_t run_id, RunStatus status, const std::string& ended_utc) {
  Stmt st(*impl_, "UPDATE runs SET status = ?2, ended_utc = ?3 WHERE id = ?1");
  st.Bind(1, run_id);
  st.Bind(2, RunStatusName(status));
  st.Bind(3, std::string_view(ended_utc));
  RB_RETURN_IF_ERROR(st.Run());
  if (sqlite3_changes(impl_->db) == 0) {
    return Status::NotFound("run " + std::to_string(run_id) + " not found");
  }
  return Status::Ok();
}

Status Database::AddEvent(const RunEvent& e) {
  Stmt st(*impl_, "INSERT INTO run_events(run_id, t, kind, detail) VALUES(?1, ?2, ?3, ?4)");
  st.Bind(1, e.run_id);
  st.Bind(2, e.t);
  st.Bind(3, std::string_view(e.kind));
  st.Bind(4, std::string_view(e.detail));
  return st.Run();
}

Result<std::vector<RunEvent>> Database::ListEvents(std::int64_t run_id) {
  Stmt st(*impl_, "SELECT run_id, t, kind, detail FROM run_events WHERE run_id = ?1 ORDER BY id");
  st.Bind(1, run_id);
  std::vector<RunEvent> out;
  while (st.Step()) out.push_back({st.Int(0), st.Double(1), st.Text(2), st.Text(3)});
  RB_RETURN_IF_ERROR(st.status());
  return out;
}

Result<Run> Database::GetRun(std::int64_t id) {
  Stmt st(*impl_, std::string("SELECT ") + kRunColumns +
                      " FROM runs r JOIN motors m ON m.id = r.motor_id WHERE r.id = ?1");
  st.Bind(1, id);
  if (st.Step()) return RunFromRow(st);
  RB_RETURN_IF_ERROR(st.status());
  return Status::NotFound("run " + std::to_string(id) + " not found; see `rotorbench run list`");
}

Result<std::vector<Run>> Database::ListRuns(std::optional<std::int64_t> motor_id) {
  Stmt st(*impl_, std::string("SELECT ") + kRunColumns +
                      " FROM runs r JOIN motors m ON m.id = r.motor_id "
                      "WHERE ?1 IS NULL OR r.motor_id = ?1 ORDER BY r.id");
  st.Bind(1, motor_id);
  std::vector<Run> out;
  while (st.Step()) out.push_back(RunFromRow(st));
  RB_RETURN_IF_ERROR(st.status());
  return out;
}

Result<std::vector<model::Sample>> Database::ReadSamples(std::int64_t run_id) {
  std::vector<model::Sample> out;
  {
    Stmt count(*impl_, "SELECT sample_count FROM runs WHERE id = ?1");
    count.Bind(1, run_id);
    if (count.Step()) out.reserve(static_cast<size_t>(std::max<std::int64_t>(0, count.Int(0))));
    RB_RETURN_IF_ERROR(count.status());
  }
  Stmt st(*impl_, "SELECT data FROM sample_chunks WHERE run_id = ?1 ORDER BY seq");
  st.Bind(1, run_id);
  while (st.Step()) {
    Status s = DecodeSampleChunk(st.Blob(0), &out);
    if (!s.ok()) return s.WithPrefix(impl_->path + ": run " + std::to_string(run_id));
  }
  RB_RETURN_IF_ERROR(st.status());
  return out;
}

Result<int> Database::MarkStaleRunsInterrupted(const std::string& ended_utc) {
  Stmt st(*impl_,
          "UPDATE runs SET status = 'interrupted', ended_utc = ?1 WHERE status = 'recording'");
  st.Bind(1, std::string_view(ended_utc));
  RB_RETURN_IF_ERROR(st.Run());
  return sqlite3_changes(impl_->db);
}

Result<std::int64_t> Database::ImportRun(const NewRun& run,
                                         std::span<const model::Sample> samples) {
  RB_RETURN_IF_ERROR(Begin());
  auto fail = [this](const Status& s) -> Status {
    Rollback().ok();
    return s;
  };
  Result<std::int64_t> id = BeginRun(run);
  if (!id.ok()) return fail(id.status());
  Status s = AppendSamples(*id, samples);
  if (!s.ok()) return fail(s);
  s = FinishRun(*id, RunStatus::kComplete,
                run.ended_utc.empty() ? run.started_utc : run.ended_utc);
  if (!s.ok()) return fail(s);
  s = Commit();
  if (!s.ok()) return fail(s);
  return *id;
}

}  // namespace rb::storage
