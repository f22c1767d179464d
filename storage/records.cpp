// Fits, rewind plans and instrument calibrations.
#include "storage/sqlite_util.h"
#include "storage/storage.h"

namespace rb::storage {
namespace {

CalibrationRecord CalibrationFromRow(const Stmt& st) {
  CalibrationRecord c;
  c.id = st.Int(0);
  c.instrument = st.Text(1);
  c.channel = st.Text(2);
  c.gain = st.Double(3);
  c.gain_u = st.Double(4);
  c.offset = st.Double(5);
  c.offset_u = st.Double(6);
  c.created_utc = st.Text(7);
  c.method = st.Text(8);
  c.notes = st.Text(9);
  return c;
}

constexpr const char* kCalColumns =
    "c.id, c.instrument, c.channel, c.gain, c.gain_u, c.offset, c.offset_u, c.created_utc, "
    "c.method, c.notes";

}  // namespace

Result<std::int64_t> Database::AddFit(const FitRecord& fit) {
  const bool own_txn = !impl_->in_txn;
  if (own_txn) RB_RETURN_IF_ERROR(Begin());
  auto fail = [&](const Status& s) -> Status {
    if (own_txn) Rollback().ok();
    return s;
  };
  Stmt st(*impl_,
          "INSERT INTO fits(motor_id, created_utc, model, software_version, result_json) "
          "VALUES(?1, ?2, ?3, ?4, ?5)");
  st.Bind(1, fit.motor_id);
  st.Bind(2, std::string_view(fit.created_utc));
  st.Bind(3, std::string_view(fit.model));
  st.Bind(4, std::string_view(fit.software_version));
  st.Bind(5, std::string_view(fit.result_json));
  Status s = st.Run();
  if (!s.ok()) return fail(s);
  const std::int64_t id = sqlite3_last_insert_rowid(impl_->db);
  for (std::int64_t run : fit.run_ids) {
    Stmt link(*impl_, "INSERT INTO fit_runs(fit_id, run_id) VALUES(?1, ?2)");
    link.Bind(1, id);
    link.Bind(2, run);
    s = link.Run();
    if (!s.ok()) return fail(s);
  }
  if (own_txn) {
    s = Commit();
    if (!s.ok()) return fail(s);
  }
  return id;
}

Result<FitRecord> Database::GetFit(std::int64_t id) {
  FitRecord f;
  {
    Stmt st(*impl_,
            "SELECT id, motor_id, created_utc, model, software_version, result_json "
            "FROM fits WHERE id = ?1");
    st.Bind(1, id);
    if (!st.Step()) {
      RB_RETURN_IF_ERROR(st.status());
      return Status::NotFound("fit " + std::to_string(id) + " not found; see `rotorbench fit list`");
    }
    f = FitRecord{st.Int(0), st.Int(1), st.Text(2), st.Text(3), st.Text(4), {}, st.Text(5)};
  }
  Stmt runs(*impl_, "SELECT run_id FROM fit_runs WHERE fit_id = ?1 ORDER BY run_id");
  runs.Bind(1, id);
  while (runs.Step()) f.run_ids.push_back(runs.Int(0));
  RB_RETURN_IF_ERROR(runs.status());
  return f;
}

Result<std::vector<FitRecord>> Database::ListFits(std::optional<std::int64_t> motor_id) {
  std::vector<std::int64_t> ids;
  {
    Stmt st(*impl_, "SELECT id FROM fits WHERE ?1 IS NULL OR motor_id = ?1 ORDER BY id");
    st.Bind(1, motor_id);
    while (st.Step()) ids.push_back(st.Int(0));
    RB_RETURN_IF_ERROR(st.status());
  }
  std::vector<FitRecord> out;
  for (std::int64_t id : ids) {
    Result<FitRecord> f = GetFit(id);
    if (!f.ok()) return f.status();
    out.push_back(std::move(*f));
  }
  return out;
}

Result<std::int64_t> Database::AddPlan(const PlanRecord& plan) {
  Stmt st(*impl_,
          "INSERT INTO rewind_plans(motor_id, baseline_fit_id, created_utc, plan_json) "
          "VALUES(?1, ?2, ?3, ?4)");
  st.Bind(1, plan.motor_id);
  st.Bind(2, plan.baseline_fit_id);
  st.Bind(3, std::string_view(plan.created_utc));
  st.Bind(4, std::string_view(plan.plan_json));
  RB_RETURN_IF_ERROR(st.Run());
  return static_cast<std::int64_t>(sqlite3_last_insert_rowid(impl_->db));
}

Result<PlanRecord> Database::GetPlan(std::int64_t id) {
  Stmt st(*impl_,
          "SELECT id, motor_id, baseline_fit_id, created_utc, plan_json FROM rewind_plans "
          "WHERE id = ?1");
  st.Bind(1, id);
  if (st.Step()) return PlanRecord{st.Int(0), st.OptInt(1), st.OptInt(2), st.Text(3), st.Text(4)};
  RB_RETURN_IF_ERROR(st.status());
  return Status::NotFound("rewind plan " + std::to_string(id) + " not found");
}

Result<std::int64_t> Database::AddCalibration(const CalibrationRecord& c) {
  Stmt st(*impl_,
          "INSERT INTO calibrations(instrument, channel, gain, gain_u, offset, offset_u, "
          "created_utc, method, notes) VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)");
  st.Bind(1, std::string_view(c.instrument));
  st.Bind(2, std::string_view(c.channel));
  st.Bind(3, c.gain);
  st.Bind(4, c.gain_u);
  st.Bind(5, c.offset);
  st.Bind(6, c.offset_u);
  st.Bind(7, std::string_view(c.created_utc));
  st.Bind(8, std::string_view(c.method));
  st.Bind(9, std::string_view(c.notes));
  RB_RETURN_IF_ERROR(st.Run());
  return static_cast<std::int64_t>(sqlite3_last_insert_rowid(impl_->db));
}

Result<std::optional<CalibrationRecord>> Database::LatestCalibration(
    const std::string& instrument, const std::string& channel) {
  Stmt st(*impl_, std::string("SELECT ") + kCalColumns +
                      " FROM calibrations c WHERE c.instrument = ?1 AND c.channel = ?2 "
                      "ORDER BY c.id DESC LIMIT 1");
  st.Bind(1, std::string_view(instrument));
  st.Bind(2, std::string_view(channel));
  if (st.Step()) return std::optional<CalibrationRecord>(CalibrationFromRow(st));
  RB_RETURN_IF_ERROR(st.status());
  return std::optional<CalibrationRecord>();
}

Status Database::LinkRunCalibration(std::int64_t run_id, std::int64_t calibration_id) {
  Stmt st(*impl_,
          "INSERT OR IGNORE INTO run_calibrations(run_id, calibration_id) VALUES(?1, ?2)");
  st.Bind(1, run_id);
  st.Bind(2, calibration_id);
  return st.Run();
}

Result<std::vector<CalibrationRecord>> Database::RunCalibrations(std::int64_t run_id) {
  Stmt st(*impl_, std::string("SELECT ") + kCalColumns +
                      " FROM calibrations c JOIN run_calibrations rc ON rc.calibration_id = c.id "
                      "WHERE rc.run_id = ?1 ORDER BY c.channel");
  st.Bind(1, run_id);
  std::vector<CalibrationRecord> out;
  while (st.Step()) out.push_back(CalibrationFromRow(st));
  RB_RETURN_IF_ERROR(st.status());
  return out;
}

}  // namespace rb::storage
