// FitMotor: a motor's runs from the database — raw samples, their calibration, the rig's
// switch events and tach details — turned into RunData and fitted.
#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "fit/fit.h"
#include "storage/storage.h"

namespace rb::fit {
namespace {

using nlohmann::json;

/// First number found under any of `keys`, searching nested objects depth-first.
std::optional<double> FindNumber(const json& j, std::initializer_list<const char*> keys) {
  if (!j.is_object()) return std::nullopt;
  for (const char* k : keys) {
    auto it = j.find(k);
    if (it != j.end() && it->is_number()) return it->get<double>();
  }
  for (const auto& [k, v] : j.items()) {
    if (v.is_object()) {
      if (auto r = FindNumber(v, keys)) return r;
    }
  }
  return std::nullopt;
}

/// Channel calibration from the run's records (the newest per channel wins).
model::ChannelCalibration* Slot(model::Calibration* c, const std::string& channel) {
  if (channel == "current") return &c->current;
  if (channel == "voltage") return &c->voltage;
  if (channel == "speed") return &c->speed;
  return nullptr;
}

}  // namespace

Result<FitSummary> FitMotor(storage::Database& db, const std::string& motor_label,
                            const FitOptions& options) {
  Result<storage::Motor> motor = db.FindMotor(motor_label);
  if (!motor.ok()) return motor.status();
  std::vector<storage::Run> runs;
  if (options.run_ids.empty()) {
    Result<std::vector<storage::Run>> all = db.ListRuns(motor->id);
    if (!all.ok()) return all.status();
    for (storage::Run& r : *all) {
      if (r.status != storage::RunStatus::kRecording) runs.push_back(std::move(r));
    }
    if (runs.empty()) {
      return Status::FailedPrecondition(fmt::format(
          "motor '{}' has no finished runs to fit; import or record runs first", motor_label));
    }
  } else {
    for (std::int64_t id : options.run_ids) {
      Result<storage::Run> r = db.GetRun(id);
      if (!r.ok()) return r.status();
      if (r->motor_id != motor->id) {
        return Status::InvalidArgument(fmt::format(
            "run {} belongs to motor '{}', not '{}'; one fit takes the runs of one motor", id,
            r->motor_label, motor_label));
      }
      if (r->status == storage::RunStatus::kRecording) {
        return Status::FailedPrecondition(
            fmt::format("run {} is still recording; fit it when it has finished", id));
      }
      runs.push_back(std::move(*r));
    }
  }

  std::vector<RunData> data;
  for (const storage::Run& r : runs) {
    RunData d;
    d.id = r.id;
    d.kind = r.kind;
    d.nominal_voltage = r.nominal_voltage;
    d.ambient_C = r.ambient_C;
    Result<std::vector<model::Sample>> samples = db.ReadSamples(r.id);
    if (!samples.ok()) return samples.status().WithPrefix(fmt::format("run {}", r.id));
    d.samples = std::move(*samples);
    // Raw samples are stored; calibration is applied here (and its uncertainty carried).
    Result<std::vector<storage::CalibrationRecord>> cals = db.RunCalibrations(r.id);
    if (!cals.ok()) return cals.status();
    if (!cals->empty()) {
      model::Calibration cal;
      std::string newest[3];
      for (const storage::CalibrationRecord& c : *cals) {
        model::ChannelCalibration* slot = Slot(&cal, c.channel);
        if (!slot) continue;
        const int k = c.channel == "current" ? 0 : c.channel == "voltage" ? 1 : 2;
        if (!newest[k].empty() && c.created_utc < newest[k]) continue;
        newest[k] = c.created_utc.empty() ? " " : c.created_utc;
        *slot = {c.gain, c.gain_u, c.offset, c.offset_u};
      }
      model::ApplyCalibration(cal, &d.samples);
      d.calibration = cal;
    }
    Result<std::vector<storage::RunEvent>> events = db.ListEvents(r.id);
    if (!events.ok()) return events.status();
    for (const storage::RunEvent& e : *events) {
      if (e.kind == "output_on") d.output_on_s.push_back(e.t);
      if (e.kind == "output_off") d.output_off_s.push_back(e.t);
    }
    const json meta = json::parse(r.meta_json, nullptr, /*allow_exceptions=*/false);
    if (!meta.is_discarded()) {
      if (auto m = FindNumber(meta, {"marks_per_rev", "marks_per_revolution", "tach_marks"})) {
        if (*m >= 1 && *m <= 1000) d.marks_per_rev = static_cast<int>(*m);
      }
      if (d.output_on_s.empty()) {
        if (auto t = FindNumber(meta, {"output_on_s"})) d.output_on_s.push_back(*t);
      }
      if (d.output_off_s.empty()) {
        if (auto t = FindNumber(meta, {"output_off_s"})) d.output_off_s.push_back(*t);
      }
    }
    data.push_back(std::move(d));
  }
  Result<FitSummary> s = FitRuns(data, options);
  if (!s.ok()) return s.status().WithPrefix("motor '" + motor_label + "'");
  s->motor = motor_label;
  return s;
}

}  // namespace rb::fit
