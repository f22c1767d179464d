// Report generation for a motor with ten runs (locked rotor ×3, spin-up ×3, steady ×2,
// coast-down ×2, simulated): gathering from the database (samples, calibration, the fit,
// predictions), building the HTML, writing it. Baseline in the same run: reading the same
// runs' samples and writing them as CSV (the export path), a plain pass over the same data.
// Goal (issue 5): ≤ 0.5 s per report.
//   report_bench [repeats] [dir]
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <string>

#include "acquire/csv_import.h"
#include "bench/bench_util.h"
#include "tests/report/report_fixture.h"

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::atoi(argv[1]) : 7;
  const std::string dir = argc > 2 ? argv[2] : "/tmp";
  const std::string db_path = dir + "/rb_report_bench.db";
  const std::string out_path = dir + "/rb_report_bench.html";
  for (const char* suffix : {"", "-wal", "-shm"}) unlink((db_path + suffix).c_str());

  // The bench database: the simulated runs and a stored fit of them.
  const rb::report::ReportInput sim =
      rb::testing::SimulatedReportInput(rb::testing::TenRunPlan(), false);
  std::map<std::int64_t, rb::fit::RunPrediction> truth;
  size_t samples = 0;
  {
    rb::Result<rb::storage::Database> db = rb::storage::Database::Open(db_path);
    if (!db.ok() || !db->AddMotor("demo-07", "", "").ok()) return 1;
    rb::fit::FitSummary s = sim.fits[0].summary;
    s.runs.clear();
    for (const rb::report::ReportRun& r : sim.runs) {
      rb::storage::NewRun nr;
      nr.motor_id = 1;
      nr.kind = r.record.kind;
      nr.started_utc = r.record.started_utc;
      nr.source = "sim";
      nr.nominal_voltage = r.record.nominal_voltage;
      rb::Result<std::int64_t> id = db->ImportRun(nr, r.samples);
      if (!id.ok()) return 1;
      truth[*id] = *r.prediction;
      samples += r.samples.size();
      rb::fit::RunFit rf;
      rf.run_id = *id;
      rf.kind = r.record.kind;
      rf.nominal_voltage = *r.record.nominal_voltage;
      s.runs.push_back(rf);
    }
    if (!rb::fit::StoreFit(*db, s).ok()) return 1;
  }
  // Stand-in for the fitter's prediction: the simulator's true trajectories (a lookup).
  const rb::report::Predictor predict = [&](const rb::fit::FitSummary&,
                                            const rb::fit::RunData& run) {
    return rb::Result<rb::fit::RunPrediction>(truth.at(run.id));
  };

  rb::bench::PrintMethod("report generation, 10 runs (median of repeats)");
  std::printf("# %zu readings in 10 runs; %d repeats\n", samples, repeats);
  std::vector<double> t_collect, t_build, t_total, t_base;
  size_t html_bytes = 0;
  for (int k = 0; k < repeats; ++k) {
    rb::Result<rb::storage::Database> db = rb::storage::Database::Open(db_path);
    if (!db.ok()) return 1;
    rb::report::CollectOptions co;
    co.motor = "demo-07";
    rb::Result<rb::report::ReportInput> in = rb::report::ReportInput{};
    rb::Result<rb::report::ReportSummary> rep = rb::report::ReportSummary{};
    const double c =
        rb::bench::TimeIt([&] { in = rb::report::CollectReportInput(*db, co, predict); });
    if (!in.ok()) return 1;
    const double b = rb::bench::TimeIt([&] { rep = rb::report::BuildReport(*in); });
    if (!rep.ok()) return 1;
    const double w = rb::bench::TimeIt([&] { std::ofstream(out_path) << rep->html; });
    html_bytes = rep->html.size();
    t_collect.push_back(c);
    t_build.push_back(b);
    t_total.push_back(c + b + w);
    t_base.push_back(rb::bench::TimeIt([&] {
      std::string all;
      for (const auto& [id, p] : truth) {
        rb::Result<std::vector<rb::model::Sample>> s = db->ReadSamples(id);
        if (s.ok()) all += rb::acquire::SamplesToCsv(*s);
      }
      std::ofstream(out_path + ".csv") << all;
    }));
  }
  const auto c = rb::bench::Summarise(t_collect), b = rb::bench::Summarise(t_build),
             t = rb::bench::Summarise(t_total), base = rb::bench::Summarise(t_base);
  std::printf("collect (db, calibration, predictions)  median %7.1f ms\n", c.median * 1e3);
  std::printf("build HTML + SVG                        median %7.1f ms  (%zu bytes)\n",
              b.median * 1e3, html_bytes);
  std::printf("report total (collect + build + write)  median %7.1f ms  [min %.1f, max %.1f]\n",
              t.median * 1e3, t.min * 1e3, t.max * 1e3);
  std::printf("baseline: read + CSV export of the runs median %7.1f ms\n", base.median * 1e3);
  std::printf("ratio report / baseline: %.2f; goal total <= 500 ms: %s\n", t.median / base.median,
              t.median <= 0.5 ? "met" : "NOT met");
  rb::bench::PrintRow({"6. report generation, 10 runs", std::to_string(samples) + " readings", t, "s",
                       "read + CSV export of the same runs", base, "≤ 0.5 s", t.median <= 0.5});
  for (const char* suffix : {"", "-wal", "-shm"}) unlink((db_path + suffix).c_str());
  unlink(out_path.c_str());
  unlink((out_path + ".csv").c_str());
  return 0;
}
