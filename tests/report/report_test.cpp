// The HTML report built from simulated runs (simulated truth: the "fit" is the simulator's
// motor, the "prediction" its true state): sections, plots, numbers equal to the model's,
// residual strips that show the instruments' known errors, and the overlay of two fits.
#include <doctest/doctest.h>

#include <cmath>
#include <numeric>

#include "tests/report/report_fixture.h"

using namespace rb;
using namespace rb::report;
using rb::testing::SimulatedReportInput;
using rb::testing::TenRunPlan;

namespace {

bool Has(const std::string& html, const std::string& s) {
  return html.find(s) != std::string::npos;
}

std::vector<rb::testing::RunPlan> ShortPlan() {
  return {{model::RunKind::kLocked, 2.0, 0.2},
          {model::RunKind::kSpinUp, 6.0, 0.6},
          {model::RunKind::kCoastDown, 6.0, 20}};
}

}  // namespace

TEST_CASE(
    "report of simulated runs: every section, four curves and one plot per run, "
    "self-contained (no scripts, no addresses, no external files)") {
  const ReportInput in = SimulatedReportInput(TenRunPlan(), /*rewound=*/false);
  Result<ReportSummary> rep = BuildReport(in);
  REQUIRE(rep.ok());
  const std::string& h = rep->html;
  CHECK(rep->figure_ids.size() == 4 + in.runs.size());
  for (const std::string& id : rep->figure_ids) {
    CHECK(Has(h, "<svg class=\"plot\" id=\"" + id + "\""));
  }
  for (const char* section : {"id=\"measured\"", "id=\"constants\"", "id=\"characteristics\"",
                              "id=\"runs\"", "id=\"method\"", "class=\"caution\""}) {
    CAPTURE(section);
    CHECK(Has(h, section));
  }
  CHECK_FALSE(Has(h, "id=\"compare\""));  // one fit: nothing to compare
  CHECK(h.rfind("<!DOCTYPE html>", 0) == 0);
  CHECK_FALSE(Has(h, "<script"));
  CHECK_FALSE(Has(h, "http"));
  CHECK_FALSE(Has(h, "src="));
  CHECK_FALSE(Has(h, "<link"));
  CHECK(Has(h, "@page { size: A4"));
  CHECK(Has(h, "@media print"));
  CHECK(Has(h, "plan</b>: standard"));        // how it was measured, from the runs' metadata
  CHECK(Has(h, "inductance not estimated"));  // the fit's diagnostics, in words
  CHECK(rep->notes.empty());
}

TEST_CASE(
    "the report's numbers are the model's: characteristics at the chosen voltage with "
    "their delta-method uncertainty, constants in trade units") {
  const ReportInput in = SimulatedReportInput(ShortPlan(), false);
  Result<ReportSummary> rep = BuildReport(in);
  REQUIRE(rep.ok());
  const model::CharacteristicsU cu =
      model::ComputeCharacteristicsU(in.fits[0].summary.Estimate(), in.voltage);
  for (const FigureRow& r : CharacteristicRows()) {
    const model::Uncertain x = cu.Get(r.index);
    const Shown s = ToDisplay(r.unit, x.value, x.u);
    CAPTURE(r.label);
    CHECK(Has(rep->html, ">" + FormatWithU(s.value, s.u) + "<"));
  }
  // Kv of the demo motor: 60/(2π·6.2 mV·s/rad) = 1540.2 rpm/V, ±1 %.
  CHECK(Has(rep->html, ">1540 ± 15<"));
  // The caution quotes the stall current and the heat at the chosen voltage.
  const double is = (in.voltage - model::DemoMotor().Vb) / model::DemoMotor().R;
  CHECK(Has(rep->html, "draws about " + FormatValue(is, 3) + " A"));
}

TEST_CASE(
    "residual strips show the instruments' errors: with the true state as the model, "
    "the current residual averages the simulated ADC offset (2 mA, model/demo.cpp)") {
  const ReportInput in = SimulatedReportInput(ShortPlan(), false);
  const ReportRun& spin = in.runs[1];
  REQUIRE(spin.record.kind == model::RunKind::kSpinUp);
  const Figure fig = RunFigure(spin, &in.fits[0].summary.runs[1], "run-x");
  // Panels: speed, its strip, current, its strip, voltage, its strip.
  REQUIRE(fig.panels.size() == 6);
  const Series& resid = fig.panels[3].series.at(0);
  REQUIRE(resid.y.size() > 500);
  const double mean =
      std::accumulate(resid.y.begin(), resid.y.end(), 0.0) / static_cast<double>(resid.y.size());
  CHECK(mean == doctest::Approx(model::DemoBench().instruments.current.offset).epsilon(0.25));
  // The strip marks ±2σ of the noise the fit reported for the channel (0.004 A).
  REQUIRE(fig.panels[3].lines.size() == 2);
  CHECK(fig.panels[3].lines[0].at == doctest::Approx(0.008));
  // The switching event is marked where it happened, on the measured panels only.
  REQUIRE(fig.panels[0].lines.size() == 1);
  CHECK(fig.panels[0].lines[0].vertical);
  CHECK(fig.panels[0].lines[0].at == doctest::Approx(0.05));  // RunScript::pre_s
  CHECK(fig.panels[0].lines[0].label == "output on");
  CHECK(fig.panels[2].lines.size() == 1);
  CHECK(fig.panels[2].lines[0].label.empty());
  // A locked rotor reads zero speed throughout: no speed panel.
  const Figure locked = RunFigure(in.runs[0], nullptr, "run-l");
  for (const Panel& p : locked.panels) CHECK(p.y.title.find("speed") == std::string::npos);
}

TEST_CASE(
    "two fits (before and after a rewind): curves overlaid, constants compared, Kv "
    "changes by +20 % and R by −30.6 % for 1.2× turns (Ke ∝ N, R ∝ N², domain.md §3.1)") {
  const ReportInput in = SimulatedReportInput(ShortPlan(), /*rewound=*/true);
  Result<ReportSummary> rep = BuildReport(in);
  REQUIRE(rep.ok());
  const std::string& h = rep->html;
  CHECK(Has(h, "id=\"compare\""));
  // fits[0] is after the rewind (fewer turns): relative to the fit before it.
  CHECK(Has(h, ">+20.0 %<"));  // Kv ∝ 1/N
  CHECK(Has(h, ">-30.6 %<"));  // R ∝ N²: 1/1.44 − 1
  // Km = Kt/√R is unchanged by a rewind at the same fill (domain.md §3.1); the row says so.
  const size_t km = h.find(">motor constant Km = Kt/√R<", h.find("id=\"compare\""));
  REQUIRE(km != std::string::npos);
  CHECK(h.substr(km, h.find("</tr>", km) - km).find(">0.0 %<") != std::string::npos);
  const std::vector<Figure> curves = CurveFigures(in.fits, in.voltage, 21);
  REQUIRE(curves.size() == 4);
  for (const Figure& f : curves) {
    int lines = 0, bands = 0;
    for (const Series& s : f.panels[0].series) {
      lines += s.style == Style::kLine || s.style == Style::kDashed;
      bands += s.style == Style::kBand;
    }
    CHECK(lines == 2);
    CHECK(bands == 2);
  }
}

TEST_CASE(
    "poorly determined constants are called out in words, runs without a prediction say "
    "why, bad requests fail with one-line messages") {
  ReportInput in = SimulatedReportInput(ShortPlan(), false);
  fit::ParamResult& tc = in.fits[0].summary.params[model::kTc];
  tc.u_combined = 0.4 * tc.value;
  in.runs[1].prediction.reset();
  in.runs[1].no_prediction_reason = "the fitter could not integrate this run";
  Result<ReportSummary> rep = BuildReport(in);
  REQUIRE(rep.ok());
  CHECK(Has(rep->html, "determine it only to ±40 %"));
  CHECK(Has(rep->html, "No fitted curve: the fitter could not integrate this run"));
  REQUIRE(rep->notes.size() == 1);
  CHECK(rep->notes[0].find("run 2") == 0);

  ReportInput none = in;
  none.fits.clear();
  Result<ReportSummary> bad = BuildReport(none);
  REQUIRE_FALSE(bad.ok());
  CHECK(bad.status().code() == Code::kInvalidArgument);
  CHECK(bad.status().message().find('\n') == std::string::npos);
  in.voltage = 0;
  CHECK_FALSE(BuildReport(in).ok());
}

TEST_CASE(
    "a constant the runs could not determine (NaN, as the fitter reports it) is said so "
    "in words, nothing prints as nan") {
  ReportInput in = SimulatedReportInput(ShortPlan(), false);
  fit::FitSummary& s = in.fits[0].summary;
  s.params[model::kJ].value = NAN;
  s.params[model::kJ].fitted = false;
  for (int i = 0; i < model::kNumParams; ++i)
    s.covariance(model::kJ, i) = s.covariance(i, model::kJ) = NAN;
  Result<ReportSummary> rep = BuildReport(in);
  REQUIRE(rep.ok());
  CHECK(Has(rep->html, "not determined by these runs"));
  CHECK_FALSE(Has(rep->html, "nan"));
  CHECK_FALSE(Has(rep->html, "NaN"));
  // The other figures keep their uncertainty (the stall torque does not depend on J).
  const model::CharacteristicsU cu = model::ComputeCharacteristicsU(s.Estimate(), in.voltage);
  CHECK(cu.Get(model::kStallTorque).u > 0);
}
