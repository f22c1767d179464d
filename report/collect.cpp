// Gathering a report's input from the database: motor, runs with calibrated samples, fits,
// and the primary fit's predictions.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "base/time_util.h"
#include "base/version.h"
#include "model/calibration.h"
#include "report/report.h"

namespace rb::report {
namespace {

/// The run's calibration as recorded (newest record per channel), applied to its samples.
Result<std::vector<model::Sample>> CalibratedSamples(storage::Database& db, std::int64_t run_id) {
  Result<std::vector<model::Sample>> samples = db.ReadSamples(run_id);
  if (!samples.ok()) return samples.status();
  Result<std::vector<storage::CalibrationRecord>> cals = db.RunCalibrations(run_id);
  if (!cals.ok()) return cals.status();
  model::Calibration c;
  for (const storage::CalibrationRecord& r : *cals) {
    model::ChannelCalibration ch{r.gain, r.gain_u, r.offset, r.offset_u};
    if (r.channel == "speed") c.speed = ch;
    if (r.channel == "current") c.current = ch;
    if (r.channel == "voltage") c.voltage = ch;
  }
  model::ApplyCalibration(c, &*samples);
  return samples;
}

}  // namespace

Result<ReportInput> CollectReportInput(storage::Database& db, const CollectOptions& options,
                                       const Predictor& predict) {
  ReportInput in;
  Result<storage::Motor> motor = db.FindMotor(options.motor);
  if (!motor.ok()) return motor.status().WithPrefix("--motor " + options.motor);
  in.motor = *motor;
  in.database = db.path();
  in.generated_utc = UtcNowIso();
  in.software_version = kVersion;

  // Fits: the ones asked for (each must belong to the motor), else the newest few.
  Result<std::vector<storage::FitRecord>> records = db.ListFits(motor->id);
  if (!records.ok()) return records.status();
  std::vector<storage::FitRecord> chosen;
  if (options.fit_ids.empty()) {
    std::vector<storage::FitRecord> all = *records;
    std::sort(all.begin(), all.end(), [](const auto& a, const auto& b) { return a.id > b.id; });
    if (all.size() > static_cast<size_t>(kMaxOverlaidFits)) all.resize(kMaxOverlaidFits);
    chosen = std::move(all);
  } else {
    for (std::int64_t id : options.fit_ids) {
      auto it = std::find_if(records->begin(), records->end(),
                             [id](const storage::FitRecord& r) { return r.id == id; });
      if (it == records->end()) {
        return Status::NotFound(
            fmt::format("--fit {}: no such fit of motor {}; see `rotorbench "
                        "motor show {}`",
                        id, options.motor, options.motor));
      }
      chosen.push_back(*it);
    }
  }
  if (chosen.empty()) {
    return Status::FailedPrecondition("motor " + options.motor +
                                      " has no fit yet; fit its runs first (`rotorbench fit " +
                                      options.motor + "`)");
  }
  for (const storage::FitRecord& r : chosen) {
    Result<fit::FitSummary> s = fit::LoadFit(db, r.id);
    if (!s.ok()) return s.status().WithPrefix(fmt::format("fit {}", r.id));
    in.fits.push_back({r.id, r.created_utc, std::move(*s)});
  }
  const fit::FitSummary& primary = in.fits[0].summary;
  std::vector<std::int64_t> used = chosen[0].run_ids;
  for (const fit::RunFit& rf : primary.runs) used.push_back(rf.run_id);

  // Runs, with the primary fit's predictions for the ones it used.
  Result<std::vector<storage::Run>> runs = db.ListRuns(motor->id);
  if (!runs.ok()) return runs.status();
  for (const storage::Run& rec : *runs) {
    ReportRun rr;
    rr.record = rec;
    rr.in_primary_fit = std::find(used.begin(), used.end(), rec.id) != used.end();
    if (rr.in_primary_fit) {
      Result<std::vector<model::Sample>> s = CalibratedSamples(db, rec.id);
      if (!s.ok()) return s.status().WithPrefix(fmt::format("run {}", rec.id));
      rr.samples = std::move(*s);
      Result<std::vector<storage::RunEvent>> ev = db.ListEvents(rec.id);
      if (!ev.ok()) return ev.status().WithPrefix(fmt::format("run {}", rec.id));
      rr.events = std::move(*ev);
      fit::RunData data{rec.id, rec.kind, rec.nominal_voltage, rec.ambient_C, rr.samples};
      if (predict) {
        Result<fit::RunPrediction> p = predict(primary, data);
        if (p.ok()) {
          rr.prediction = std::move(*p);
        } else {
          rr.no_prediction_reason = p.status().message();
        }
      } else {
        rr.no_prediction_reason = "no model prediction available";
      }
    } else {
      rr.no_prediction_reason = "not used by the fit";
    }
    in.runs.push_back(std::move(rr));
  }

  // The voltage: as asked, else the highest supply setting among the fit's runs.
  if (options.voltage) {
    in.voltage = *options.voltage;
    in.voltage_origin = "as asked (--voltage)";
  } else {
    double v = 0;
    for (const fit::RunFit& rf : primary.runs) {
      if (std::isfinite(rf.nominal_voltage)) v = std::max(v, rf.nominal_voltage);
    }
    for (const ReportRun& r : in.runs) {
      if (r.in_primary_fit && r.record.nominal_voltage) v = std::max(v, *r.record.nominal_voltage);
    }
    if (!(v > 0)) {
      return Status::InvalidArgument(
          "report of motor " + options.motor +
          ": the fitted runs carry no supply setting; give the voltage with --voltage V");
    }
    in.voltage = v;
    in.voltage_origin = "the highest supply setting among the fitted runs (change with --voltage)";
  }
  return in;
}

}  // namespace rb::report
