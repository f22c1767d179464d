// Report inputs built from the bench simulator (simulated truth), for tests, the browser
// check and the benchmark. The "fit" is the true parameter set with a chosen covariance; the
// "prediction" of a run is the simulator's true state at the readings' times, so residuals
// are exactly the instruments' errors.
#pragma once

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "model/model.h"
#include "report/report.h"

namespace rb::testing {

/// A fit summary holding `p` with relative standard uncertainties `rel` on the estimated
/// parameters (R, Ke, J, Tc, b, Vb; L held fixed) and a correlation of R with Ke.
inline fit::FitSummary SummaryOf(const model::MotorParams& p, double rel,
                                 const std::string& motor) {
  fit::FitSummary s;
  s.motor = motor;
  s.model.brush_drop = true;
  for (int i = 0; i < model::kNumParams; ++i) {
    fit::ParamResult& r = s.params[static_cast<size_t>(i)];
    r.value = model::Get(p, i);
    r.fitted = i != model::kL;
    r.stderr_stat = r.fitted ? 0.7 * rel * std::fabs(r.value) : 0;
    r.u_combined = r.fitted ? rel * std::fabs(r.value) : 0;
    s.covariance(i, i) = r.u_combined * r.u_combined;
    s.covariance_stat(i, i) = r.stderr_stat * r.stderr_stat;
  }
  const double c = 0.5 * s.params[model::kR].u_combined * s.params[model::kKe].u_combined;
  s.covariance(model::kR, model::kKe) = s.covariance(model::kKe, model::kR) = c;
  s.iterations = 12;
  s.final_cost = 1234.5;
  s.termination = "converged";
  s.software_version = "test";
  return s;
}

/// The true state, interpolated at the readings' times, as a prediction.
inline fit::RunPrediction TruthAsPrediction(const model::SimulatedRun& sim) {
  fit::RunPrediction p;
  const auto& tr = sim.truth;
  for (const model::Sample& s : sim.samples) {
    p.t.push_back(s.t);
    auto it = std::lower_bound(tr.begin(), tr.end(), s.t,
                               [](const model::TrueState& x, double t) { return x.t < t; });
    // The nearest true state (readings' times are rounded to the nanosecond).
    if (it == tr.end() || (it != tr.begin() && s.t - (it - 1)->t < it->t - s.t)) --it;
    p.speed.push_back(it->w);
    p.current.push_back(it->i);
    p.voltage.push_back(it->v_terminal);
  }
  return p;
}

struct RunPlan {
  model::RunKind kind;
  double volts;
  double duration_s;
};

/// A plan like a bench user's: spin-ups at three voltages, coast-downs, locked rotor.
inline std::vector<RunPlan> TenRunPlan() {
  using model::RunKind;
  return {{RunKind::kLocked, 1.0, 0.2},   {RunKind::kLocked, 2.0, 0.2},
          {RunKind::kLocked, 3.0, 0.2},   {RunKind::kSpinUp, 3.0, 0.6},
          {RunKind::kSpinUp, 6.0, 0.6},   {RunKind::kSpinUp, 9.0, 0.6},
          {RunKind::kSteady, 6.0, 0.5},   {RunKind::kSteady, 9.0, 0.5},
          {RunKind::kCoastDown, 6.0, 20}, {RunKind::kCoastDown, 9.0, 20}};
}

/// A report input of the demo motor: the runs of `plan` simulated (seeded), fitted by the
/// truth with 1 % uncertainties; with `rewound`, a second, older fit of the motor before a
/// rewind (more turns: Ke × 1.2, R × 1.44) is overlaid.
inline report::ReportInput SimulatedReportInput(const std::vector<RunPlan>& plan, bool rewound) {
  report::ReportInput in;
  in.motor = {1, "demo-07", "lot-2031", "invented demo motor", "2031-03-02T09:00:00.000Z"};
  in.database = "bench.db";
  in.generated_utc = "2031-03-04T10:00:00.000Z";
  in.software_version = "test";
  const model::MotorParams truth = model::DemoMotor();
  report::ReportFit f{7, "2031-03-04T09:30:00.000Z", SummaryOf(truth, 0.01, in.motor.label)};
  std::int64_t id = 1;
  for (const RunPlan& rp : plan) {
    model::BenchModel bench = model::DemoBench(static_cast<std::uint64_t>(100 + id));
    model::RunScript script;
    script.kind = rp.kind;
    script.volts = rp.volts;
    script.duration_s = rp.duration_s;
    Result<model::SimulatedRun> sim = model::SimulateRun(bench, script);
    if (!sim.ok()) continue;
    report::ReportRun rr;
    rr.record.id = id;
    rr.record.motor_id = 1;
    rr.record.motor_label = in.motor.label;
    rr.record.kind = rp.kind;
    rr.record.status = storage::RunStatus::kComplete;
    rr.record.started_utc = "2031-03-04T09:0" + std::to_string(id % 10) + ":00.000Z";
    rr.record.ended_utc = rr.record.started_utc;
    rr.record.source = "sim";
    rr.record.nominal_voltage = rp.volts;
    rr.record.meta_json = R"({"plan": "standard", "rig": "simulated bench"})";
    rr.record.sample_count = static_cast<std::int64_t>(sim->samples.size());
    rr.record.duration_s = sim->samples.empty() ? 0 : sim->samples.back().t;
    rr.samples = sim->samples;
    rr.prediction = TruthAsPrediction(*sim);
    if (rp.kind != model::RunKind::kSteady) {
      rr.events.push_back({id, sim->step_time_s,
                           rp.kind == model::RunKind::kCoastDown ? "output_off" : "output_on",
                           ""});
    }
    rr.in_primary_fit = true;
    fit::RunFit fr;
    fr.run_id = id;
    fr.kind = rp.kind;
    fr.nominal_voltage = rp.volts;
    fr.channels = {{"speed", rr.samples.size() / 4, 4.0, 3.0, 1},
                   {"current", rr.samples.size(), 0.0045, 0.004, 0}};
    f.summary.runs.push_back(fr);
    in.runs.push_back(std::move(rr));
    ++id;
  }
  f.summary.diagnostics.push_back({fit::Diagnostic::Severity::kInfo, "L_H",
                                   "inductance not estimated: current sampled at 2 kHz, "
                                   "slower than L/R",
                                   "log current at ≥ 50 kHz during a locked-rotor step"});
  in.fits.push_back(f);
  if (rewound) {
    model::MotorParams before = truth;
    before.Ke *= 1.2;
    before.R *= 1.44;
    in.fits.push_back({3, "2031-02-11T15:00:00.000Z", SummaryOf(before, 0.02, in.motor.label)});
  }
  in.voltage = 6.0;
  in.voltage_origin = "as asked (--voltage)";
  return in;
}

}  // namespace rb::testing
