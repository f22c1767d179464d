#include "acquire/run_writer.h"

#include "base/time_util.h"

namespace rb::acquire {

Status RunWriter::Begin(const storage::NewRun& run, double t0,
                        const std::vector<std::string>& instruments) {
  RB_RETURN_IF_ERROR(db_->Begin());
  auto fail = [this](const Status& s) {
    db_->Rollback().ok();
    return s;
  };
  Result<std::int64_t> id = db_->BeginRun(run);
  if (!id.ok()) return fail(id.status());
  for (const std::string& ins : instruments) {
    for (const char* ch : {"current", "voltage", "speed"}) {
      Result<std::optional<storage::CalibrationRecord>> cal = db_->LatestCalibration(ins, ch);
      if (!cal.ok()) return fail(cal.status());
      if (*cal) {
        Status s = db_->LinkRunCalibration(*id, (*cal)->id);
        if (!s.ok()) return fail(s);
      }
    }
  }
  Status s = db_->Commit();
  if (!s.ok()) return fail(s);
  run_id_ = *id;
  t0_ = t0;
  total_ = 0;
  committed_ = 0;
  last_t_ = 0;
  pending_.clear();
  events_.clear();
  return Status::Ok();
}

void RunWriter::Add(model::Sample s) {
  s.t -= t0_;
  if (s.t < last_t_) s.t = last_t_;  // never out of order (guards float dust at merges)
  last_t_ = s.t;
  pending_.push_back(s);
  ++total_;
}

void RunWriter::AddEvent(double stream_t, std::string kind, std::string detail) {
  events_.push_back({run_id_, stream_t - t0_, std::move(kind), std::move(detail)});
}

Status RunWriter::Flush() {
  if (!open() || (pending_.empty() && events_.empty())) return Status::Ok();
  RB_RETURN_IF_ERROR(db_->Begin());
  Status s = db_->AppendSamples(run_id_, pending_);
  for (const storage::RunEvent& e : events_) {
    if (s.ok()) s = db_->AddEvent(e);
  }
  if (s.ok()) s = db_->Commit();
  if (!s.ok()) {
    db_->Rollback().ok();
    return s;  // the buffer is kept; the next Flush tries again
  }
  committed_ += pending_.size();
  pending_.clear();
  events_.clear();
  return Status::Ok();
}

Status RunWriter::Finish(storage::RunStatus status, const std::string& reason, double stream_t) {
  if (!open()) return Status::Ok();
  AddEvent(stream_t, "end", reason);
  RB_RETURN_IF_ERROR(Flush());
  RB_RETURN_IF_ERROR(db_->FinishRun(run_id_, status, UtcNowIso()));
  run_id_ = 0;
  return Status::Ok();
}

}  // namespace rb::acquire
