// The report document: sections in reading order, built from ReportInput.
#include "report/report.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <nlohmann/json.hpp>
#include <set>

#include "model/closed_form.h"

namespace rb::report {
namespace {

using model::CharacteristicIndex;

/// A parameter row of the constants table.
struct ParamRow {
  int index;  // model::ParamIndex (Kv and Kt both come from Ke)
  const char* name;
  const char* symbol;
  DisplayUnit unit;
};

std::vector<ParamRow> ParamRows() {
  return {{model::kR, "armature resistance", "R", ResistanceUnit()},
          {model::kKe, "speed constant", "Kv", KvUnit()},
          {model::kKe, "torque constant", "Kt", KtUnit()},
          {model::kJ, "rotor inertia", "J", InertiaUnit()},
          {model::kTc, "Coulomb friction torque", "Tc", TorqueUnit()},
          {model::kB, "viscous friction", "b", ViscousUnit()},
          {model::kVb, "brush drop (total)", "Vb", VoltageUnit()},
          {model::kL, "inductance", "L", InductanceUnit()}};
}

double ParamU(const fit::ParamResult& p) {
  if (!p.fitted) return 0;
  return p.u_combined > 0 ? p.u_combined : p.stderr_stat;
}

std::string E(std::string_view s) { return EscapeHtml(s); }

std::string Card(const std::string& key, const std::string& value, const std::string& unit,
                 const std::string& sub) {
  return "<div class=\"card\"><div class=\"k\">" + E(key) + "</div><div class=\"v\">" + value +
         " <span class=\"u\">" + E(unit) + "</span></div><div class=\"u\">" + sub + "</div></div>";
}

std::string FitName(const ReportFit& f) {
  std::string s = f.id > 0 ? "fit " + std::to_string(f.id) : "the fit";
  if (f.created_utc.size() >= 16) s += " of " + f.created_utc.substr(0, 10);
  return s;
}

std::string Header(const ReportInput& in) {
  std::string h = "<header><h1>Motor " + E(in.motor.label) + "</h1><p class=\"meta\">";
  if (!in.motor.batch.empty()) h += "batch " + E(in.motor.batch) + " · ";
  if (!in.motor.notes.empty()) h += E(in.motor.notes) + " · ";
  h += "bench report generated " + E(in.generated_utc) + " by rotorbench " + E(in.software_version);
  if (!in.database.empty()) h += " from " + E(in.database);
  h += "</p></header>";
  return h;
}

std::string Cards(const ReportFit& f, const model::CharacteristicsU& cu, double v) {
  const auto& p = f.summary.params;
  std::string c = "<div class=\"cards\">";
  auto param = [&](const char* key, int i, const DisplayUnit& u) {
    const Shown s =
        ToDisplay(u, p[static_cast<size_t>(i)].value, ParamU(p[static_cast<size_t>(i)]));
    c += Card(key, FormatWithU(s.value, s.u), u.unit, "± 1 standard uncertainty");
  };
  auto figure = [&](const char* key, CharacteristicIndex i, const DisplayUnit& u) {
    const model::Uncertain x = cu.Get(i);
    const Shown s = ToDisplay(u, x.value, x.u);
    c += Card(key, FormatWithU(s.value, s.u), u.unit, "at " + FormatSetting(v) + " V");
  };
  param("speed constant Kv", model::kKe, KvUnit());
  param("torque constant Kt", model::kKe, KtUnit());
  param("resistance R", model::kR, ResistanceUnit());
  figure("no-load speed", model::kNoLoadSpeed, SpeedUnit());
  figure("stall torque", model::kStallTorque, TorqueUnit());
  figure("maximum output power", model::kMaxPower, PowerUnit());
  figure("maximum efficiency", model::kMaxEfficiency, EfficiencyUnit());
  return c + "</div>";
}

std::string Cautions(const ReportFit& f, double v) {
  const model::MotorParams p = f.summary.Params();
  const double is = std::max(0.0, model::StallCurrent(p, v));
  return "<aside class=\"caution\"><b>Safety, in brief.</b> General guidance only: it does not "
         "replace a risk assessment, the codes and workplace rules that apply where you work, "
         "or the supply, battery and instrument makers' instructions.<ul>"
         "<li><b>Stalled rotor:</b> at " +
         FormatSetting(v) + " V this motor draws about " + FormatValue(is, 3) +
         " A with the shaft held and turns about " + FormatValue(v * is, 3) +
         " W into heat in its winding. Use short pulses, a current limit and a timeout; let it "
         "cool between tests.</li>"
         "<li><b>Spinning parts:</b> clamp the motor; guard shafts, couplings and any flywheel; "
         "wear eye protection; keep hair, sleeves and cables clear. A coasting motor keeps "
         "turning (and its terminals stay live) until it stops.</li>"
         "<li><b>Supplies and batteries:</b> a battery can deliver hundreds of amperes into a "
         "short; fuse the lead close to the battery and prefer a current-limited bench supply "
         "for first tests.</li></ul></aside>";
}

/// How the runs were measured, from their metadata (as the recorder writes it): plan, rig,
/// supply, host limits, speed measurement. Distinct values per line, in a fixed order.
std::vector<std::pair<std::string, std::set<std::string>>> HowMeasured(
    const std::vector<ReportRun>& runs) {
  using nlohmann::json;
  std::vector<std::pair<std::string, std::set<std::string>>> out = {
      {"plan", {}}, {"rig", {}}, {"supply", {}}, {"host limits", {}}, {"speed from", {}}};
  auto num = [](const json& j, const char* k) {
    return j.contains(k) && j[k].is_number() ? j[k].get<double>() : NAN;
  };
  for (const ReportRun& r : runs) {
    const json j = json::parse(r.record.meta_json, nullptr, false);
    if (!j.is_object()) continue;
    if (j.contains("plan") && j["plan"].is_string()) out[0].second.insert(j["plan"]);
    if (j.contains("rig") && j["rig"].is_string()) out[1].second.insert(j["rig"]);
    if (j.contains("rig") && j["rig"].is_object()) {
      const json& rig = j["rig"];
      std::string d = rig.value("instrument", rig.value("name", std::string("rig")));
      if (rig.contains("firmware") && rig["firmware"].is_string()) {
        d += ", firmware " + rig["firmware"].get<std::string>();
      }
      if (rig.value("simulated", false)) d += ", simulated";
      if (std::isfinite(num(rig, "adc_rate_hz"))) {
        d += ", current and voltage at " + FormatSetting(num(rig, "adc_rate_hz")) + " Hz";
      }
      if (std::isfinite(num(rig, "marks_per_rev"))) {
        d += ", " + FormatSetting(num(rig, "marks_per_rev")) + " tach marks/rev";
      }
      out[1].second.insert(d);
    }
    if (std::isfinite(num(j, "supply_V"))) {
      out[2].second.insert(FormatSetting(num(j, "supply_V")) + " V at full output");
    }
    if (j.contains("host_limits") && j["host_limits"].is_object()) {
      const json& l = j["host_limits"];
      std::string d;
      if (std::isfinite(num(l, "current_A"))) d += FormatSetting(num(l, "current_A")) + " A";
      if (std::isfinite(num(l, "max_locked_s"))) {
        d += (d.empty() ? "" : ", ") + FormatSetting(num(l, "max_locked_s")) +
             " s per locked-rotor pulse";
      }
      if (!d.empty()) out[3].second.insert(d);
    }
    if (j.contains("tach") && j["tach"].is_object() && j["tach"].contains("speed_from") &&
        j["tach"]["speed_from"].is_string()) {
      out[4].second.insert(j["tach"]["speed_from"].get<std::string>());
    }
  }
  std::erase_if(out, [](const auto& kv) { return kv.second.empty(); });
  return out;
}

std::string MeasuredSection(const ReportInput& in) {
  std::string h = "<section id=\"measured\"><h2>The motor and how it was measured</h2>";
  if (in.runs.empty()) return h + "<p>No runs are recorded for this motor.</p></section>";
  std::map<std::string, int> kinds;
  std::set<std::string> sources;
  std::string first, last;
  for (const ReportRun& r : in.runs) {
    ++kinds[std::string(model::RunKindName(r.record.kind))];
    std::string src = r.record.source;
    if (src.rfind("import:", 0) == 0) src = "imported files";
    sources.insert(src);
    if (first.empty() || r.record.started_utc < first) first = r.record.started_utc;
    const std::string end = r.record.ended_utc.empty() ? r.record.started_utc : r.record.ended_utc;
    if (end > last) last = end;
  }
  std::string kind_text;
  for (const auto& [k, n] : kinds) {
    if (!kind_text.empty()) kind_text += ", ";
    kind_text += std::to_string(n) + " " + k;
  }
  std::string src_text;
  for (const auto& s : sources) src_text += (src_text.empty() ? "" : ", ") + s;
  h += "<p>" + std::to_string(in.runs.size()) + " runs (" + E(kind_text) + "), recorded " +
       E(first.substr(0, 19)) + " to " + E(last.substr(0, 19)) + " UTC, from " + E(src_text) +
       ".</p>";
  const auto how = HowMeasured(in.runs);
  if (!how.empty()) {
    h += "<p class=\"small\">";
    for (const auto& [k, vals] : how) {
      std::string v;
      for (const auto& x : vals) v += (v.empty() ? "" : "; ") + x;
      h += "<b>" + E(k) + "</b>: " + E(v) + "<br>";
    }
    h += "</p>";
  }
  // The source column only when the runs came from more than one place (else it is above).
  const bool one_source = sources.size() == 1;
  std::vector<std::string> head = {"run", "kind", "status", "started (UTC)", "duration [s]",
                                   "samples", "supply [V]", "ambient [°C]"};
  if (!one_source) head.push_back("source");
  head.push_back("in fit");
  HtmlTable t(head, {0, 4, 5, 6, 7});
  for (const ReportRun& r : in.runs) {
    const auto& rec = r.record;
    std::string started = rec.started_utc.substr(0, 19);
    if (started.size() > 10 && started[10] == 'T') started[10] = ' ';
    std::vector<std::string> row = {std::to_string(rec.id), E(model::RunKindName(rec.kind)),
                                    E(storage::RunStatusName(rec.status)), E(started),
                                    FormatValue(rec.duration_s, 3),
                                    std::to_string(rec.sample_count),
                                    rec.nominal_voltage ? FormatSetting(*rec.nominal_voltage) : "–",
                                    rec.ambient_C ? FormatValue(*rec.ambient_C, 3) : "–"};
    if (!one_source) row.push_back(E(rec.source));
    row.push_back(r.in_primary_fit ? "yes" : "no");
    t.Row(row);
  }
  return h + t.Render() + "</section>";
}

std::string ConstantsSection(const ReportFit& f) {
  const fit::FitSummary& s = f.summary;
  std::string h = "<section id=\"constants\"><h2>Constants</h2><p>From " + E(FitName(f)) +
                  ": model <b>" + E(s.model.Name()) + "</b>, " + std::to_string(s.runs.size()) +
                  " runs, solver " + E(s.termination) + " after " + std::to_string(s.iterations) +
                  " iterations. Values ± one standard uncertainty (combined: fit and "
                  "instruments).</p>";
  HtmlTable t({"quantity", "", "value ± u", "unit", "rel. u", "note"}, {2, 4});
  for (const ParamRow& r : ParamRows()) {
    const fit::ParamResult& p = s.params[static_cast<size_t>(r.index)];
    const Shown v = ToDisplay(r.unit, p.value, ParamU(p));
    const std::string note = !std::isfinite(p.value) ? "not determined by these runs"
                             : p.fitted               ? ""
                                                      : "held fixed, not estimated";
    t.Row({E(r.name), E(r.symbol), FormatWithU(v.value, v.u), E(r.unit.unit),
           FormatRelative(v.value, v.u), note});
  }
  if (s.R20 && std::isfinite(*s.R20)) {
    t.Row({"resistance at 20 °C", "R20", FormatWithU(*s.R20, s.R20_u.value_or(0)), "Ω",
           FormatRelative(*s.R20, s.R20_u.value_or(0)),
           s.temperature_C ? "from " + FormatValue(*s.temperature_C, 3) + " °C, copper α20" : ""});
  }
  const model::MotorEstimate e = s.Estimate();
  const double te = model::ElectricalTimeConstant(e.value);
  const double te_u = model::DeltaMethodU(
      e, [](const model::MotorParams& p) { return model::ElectricalTimeConstant(p); });
  if (s.params[model::kL].fitted || e.value.L > 0) {
    t.Row({"electrical time constant L/R", "τe",
           FormatWithU(TimeMsUnit().from_si(te), TimeMsUnit().from_si(te_u)), "ms",
           FormatRelative(te, te_u), ""});
  }
  h += t.Render();
  // Diagnostics in words, then parameters whose uncertainty is large and not yet explained.
  std::string items;
  std::set<std::string> mentioned;
  for (const fit::Diagnostic& d : s.diagnostics) {
    const char* cls = d.severity == fit::Diagnostic::Severity::kError     ? "error"
                      : d.severity == fit::Diagnostic::Severity::kWarning ? "warning"
                                                                          : "note";
    const char* word = d.severity == fit::Diagnostic::Severity::kError     ? "Problem"
                       : d.severity == fit::Diagnostic::Severity::kWarning ? "Warning"
                                                                           : "Note";
    mentioned.insert(d.param);
    items += std::string("<li class=\"") + cls + "\"><b>" + word + "</b>" +
             (d.param.empty() ? "" : " (" + E(d.param) + ")") + ": " + E(d.message);
    if (!d.suggestion.empty()) items += " <i>What helps:</i> " + E(d.suggestion);
    items += "</li>";
  }
  for (int i = 0; i < model::kNumParams; ++i) {
    const fit::ParamResult& p = s.params[static_cast<size_t>(i)];
    const std::string name(model::kParamNames[static_cast<size_t>(i)]);
    if (!p.fitted || mentioned.count(name) || p.value == 0) continue;
    const double rel = ParamU(p) / std::fabs(p.value);
    if (rel > 0.25) {
      items += "<li class=\"warning\"><b>Warning</b> (" + E(name) +
               "): these runs determine it only to ±" + FormatValue(100 * rel, 2) +
               " % (one standard uncertainty); figures that depend on it are rough.</li>";
    }
  }
  if (!items.empty()) {
    h += "<h3>What the data can and cannot tell</h3><ul class=\"diag\">" + items + "</ul>";
  }
  return h + "</section>";
}

std::string CharacteristicsSection(const ReportInput& in, const model::CharacteristicsU& cu,
                                   const ReportOptions& o, ReportSummary* summary) {
  const double v = in.voltage;
  std::string h = "<section id=\"characteristics\"><h2>Characteristics at " + FormatSetting(v) +
                  " V</h2><p class=\"small\">Supply voltage: " + E(in.voltage_origin) +
                  ". Steady state, supply without internal resistance, winding at the fit's "
                  "temperature.</p>";
  HtmlTable t({"figure", "value ± u", "unit", "rel. u"}, {1, 3});
  for (const FigureRow& r : CharacteristicRows()) {
    const model::Uncertain x = cu.Get(r.index);
    const Shown s = ToDisplay(r.unit, x.value, x.u);
    t.Row({r.sub ? "<span class=\"small\">" + E(r.label) + "</span>" : E(r.label),
           FormatWithU(s.value, s.u), E(r.unit.unit), FormatRelative(s.value, s.u)});
  }
  h += t.Render();
  std::string grid = "<div class=\"grid2\">";
  for (const Figure& fig : CurveFigures(in.fits, v, o.curve_points)) {
    summary->figure_ids.push_back(fig.id);
    grid += FigureHtml(RenderSvg(fig), "");
  }
  grid += "</div>";
  std::string caption = "Lines: the fitted model";
  if (in.fits.size() > 1) {
    caption += " (solid: " + E(FitName(in.fits[0])) + "; dashed: the other fits)";
  }
  caption +=
      ". Shaded: ±2 standard uncertainties (about 95 %) from the fit's covariance, "
      "by the delta method. Markers: ■ no load, ▲ stall, ● maximum power, ◆ maximum "
      "efficiency.";
  return h + grid + "<p class=\"small\">" + caption + "</p></section>";
}

std::string CompareSection(const ReportInput& in) {
  if (in.fits.size() < 2) return "";
  std::string h = "<section id=\"compare\"><h2>Fits compared</h2><p>" +
                  std::to_string(in.fits.size()) +
                  " fits of this motor (for example before and after a rewind); characteristics "
                  "at " +
                  FormatSetting(in.voltage) + " V. Their curves are overlaid above.</p>";
  std::vector<std::string> head = {"quantity", "unit"};
  std::vector<size_t> num;
  for (size_t i = 0; i < in.fits.size(); ++i) {
    head.push_back("<span style=\"color:" + std::string(SeriesColour(static_cast<int>(i))) +
                   "\">■</span> " + E(FitName(in.fits[i])));
    num.push_back(i + 2);
  }
  const bool delta = in.fits.size() == 2;
  if (delta) {
    head.push_back("change");
    num.push_back(4);
  }
  HtmlTable t(head, num);
  std::vector<model::CharacteristicsU> cus;
  for (const ReportFit& f : in.fits) {
    cus.push_back(model::ComputeCharacteristicsU(f.summary.Estimate(), in.voltage));
  }
  auto add = [&](const std::string& name, const DisplayUnit& unit, auto value_of) {
    std::vector<std::string> row = {E(name), E(unit.unit)};
    std::vector<double> vals;
    for (size_t i = 0; i < in.fits.size(); ++i) {
      const auto [si, u] = value_of(i);
      const Shown s = ToDisplay(unit, si, u);
      vals.push_back(s.value);
      row.push_back(FormatWithU(s.value, s.u));
    }
    if (delta) {
      const double change = 100 * (vals[0] - vals[1]) / std::fabs(vals[1]);
      row.push_back(vals[1] == 0 || !std::isfinite(change) ? "–"
                    : std::fabs(change) < 0.05             ? "0.0 %"  // never "-0.0 %"
                                                           : fmt::format("{:+.1f} %", change));
    }
    t.Row(row);
  };
  for (const ParamRow& r : ParamRows()) {
    if (r.index == model::kL) continue;
    add(std::string(r.name) + " " + r.symbol, r.unit, [&](size_t i) {
      const fit::ParamResult& p = in.fits[i].summary.params[static_cast<size_t>(r.index)];
      return std::pair{p.value, ParamU(p)};
    });
  }
  for (const FigureRow& r : CharacteristicRows()) {
    if (r.sub) continue;
    add(r.label, r.unit, [&](size_t i) {
      const model::Uncertain x = cus[i].Get(r.index);
      return std::pair{x.value, x.u};
    });
  }
  if (delta) {
    h += "<p class=\"small\">Change: " + E(FitName(in.fits[0])) + " relative to " +
         E(FitName(in.fits[1])) + ".</p>";
  }
  return h + t.Render() + "</section>";
}

std::string RunCaption(const ReportRun& r, const fit::RunFit* rf) {
  const auto& rec = r.record;
  std::string c = "<b>Run " + std::to_string(rec.id) + "</b> · " + E(model::RunKindName(rec.kind));
  if (rec.nominal_voltage) c += " at " + FormatSetting(*rec.nominal_voltage) + " V";
  c += " · " + E(rec.started_utc.substr(0, 19)) + " UTC · " + FormatValue(rec.duration_s, 3) +
       " s, " + std::to_string(rec.sample_count) + " readings";
  if (rec.status != storage::RunStatus::kComplete) {
    c += " · <b>" + E(storage::RunStatusName(rec.status)) + "</b>";
  }
  if (rf) {
    std::string parts;
    for (const fit::ChannelFit& ch : rf->channels) {
      const DisplayUnit u = ch.channel == "speed"     ? SpeedUnit()
                            : ch.channel == "current" ? CurrentUnit()
                                                      : VoltageUnit();
      parts += (parts.empty() ? "" : "; ") + E(ch.channel) + " " +
               FormatValue(u.from_si(ch.rms), 2) + " " + u.unit + " (noise σ " +
               FormatValue(u.from_si(ch.sigma), 2) + " " + u.unit;
      if (ch.outliers) parts += ", " + std::to_string(ch.outliers) + " down-weighted";
      parts += ")";
    }
    if (!parts.empty()) c += ". Residual RMS: " + parts;
  }
  if (!r.prediction) {
    c += ". No fitted curve: " +
         E(r.no_prediction_reason.empty() ? "no prediction" : r.no_prediction_reason);
  }
  return c + ".";
}

std::string RunsSection(const ReportInput& in, ReportSummary* summary) {
  std::string h =
      "<section class=\"runs\" id=\"runs\"><h2>Runs: measured and fitted</h2>"
      "<p class=\"small\">Grey dots: readings (calibrated). Blue line: " +
      E(FitName(in.fits[0])) +
      " driven by the run's own logged voltage. Strips beneath: measured − model, "
      "with ±2σ of the instrument noise the fit assumed.</p>";
  int shown = 0;
  for (const ReportRun& r : in.runs) {
    if (!r.in_primary_fit) continue;
    const fit::RunFit* rf = nullptr;
    for (const fit::RunFit& x : in.fits[0].summary.runs) {
      if (x.run_id == r.record.id) rf = &x;
    }
    const Figure fig = RunFigure(r, rf, "run-" + std::to_string(r.record.id));
    if (fig.panels.empty()) continue;
    summary->figure_ids.push_back(fig.id);
    h += FigureHtml(RenderSvg(fig), RunCaption(r, rf));
    ++shown;
  }
  if (shown == 0) h += "<p>No run of the fit has readings to plot.</p>";
  return h + "</section>";
}

std::string MethodSection(const ReportFit& f) {
  std::string h =
      "<section id=\"method\"><h2>How these numbers were obtained</h2><p>The runs were "
      "fitted jointly by nonlinear least squares to the motor's differential equations "
      "(armature circuit and shaft), driven by the logged terminal voltage; speed, current and "
      "voltage residuals are weighted by their noise. Kt equals Ke in SI units. Uncertainties "
      "combine the fit's statistical error with the instruments' calibration; figures derived "
      "from the constants (curves, operating points) carry them by first-order propagation "
      "(the delta method) including the correlations between constants.</p>";
  if (!f.summary.budget.empty()) {
    HtmlTable t({"constant", "source", "u", "unit"}, {2});
    for (const fit::BudgetLine& b : f.summary.budget) {
      const int i = b.param;
      const ParamRow* row = nullptr;
      static const std::vector<ParamRow> rows = ParamRows();
      for (const ParamRow& r : rows) {
        if (r.index == i) {
          row = &r;
          break;
        }
      }
      if (!row) continue;
      const Shown s = ToDisplay(row->unit, f.summary.params[static_cast<size_t>(i)].value, b.u);
      t.Row({E(row->symbol), E(b.source), FormatValue(s.u, 2), E(row->unit.unit)});
    }
    h += "<h3>Uncertainty budget</h3>" + t.Render();
  }
  return h + "</section>";
}

}  // namespace

const std::vector<FigureRow>& CharacteristicRows() {
  static const std::vector<FigureRow> rows = {
      {model::kNoLoadSpeed, "no-load speed", "no_load_speed_rad_s", SpeedUnit(), false},
      {model::kNoLoadCurrent, "no-load current", "no_load_current_A", CurrentUnit(), false},
      {model::kStallCurrent, "stall current", "stall_current_A", CurrentUnit(), false},
      {model::kStallTorque, "stall torque", "stall_torque_N_m", TorqueUnit(), false},
      {model::kMaxPower, "maximum output power", "max_power_W", PowerUnit(), false},
      {model::kMaxPowerSpeed, "… at speed", "max_power_speed_rad_s", SpeedUnit(), true},
      {model::kMaxPowerTorque, "… at torque", "max_power_torque_N_m", TorqueUnit(), true},
      {model::kMaxPowerCurrent, "… at current", "max_power_current_A", CurrentUnit(), true},
      {model::kMaxEfficiency, "maximum efficiency", "max_efficiency", EfficiencyUnit(), false},
      {model::kMaxEffSpeed, "… at speed", "max_efficiency_speed_rad_s", SpeedUnit(), true},
      {model::kMaxEffTorque, "… at torque", "max_efficiency_torque_N_m", TorqueUnit(), true},
      {model::kMaxEffCurrent, "… at current", "max_efficiency_current_A", CurrentUnit(), true},
      {model::kMotorConstant, "motor constant Km = Kt/√R", "Km_N_m_per_sqrt_W", MotorConstantUnit(),
       false},
      {model::kMechTimeConstant, "mechanical time constant τm", "tau_m_s", TimeMsUnit(), false}};
  return rows;
}

Result<ReportSummary> BuildReport(const ReportInput& in, const ReportOptions& options) {
  if (in.fits.empty()) {
    return Status::InvalidArgument("report of motor " + in.motor.label +
                                   ": no fit to report; run `rotorbench fit` first");
  }
  if (!(in.voltage > 0) || !std::isfinite(in.voltage)) {
    return Status::InvalidArgument(
        fmt::format("--voltage {}: expected a supply voltage > 0 V", in.voltage));
  }
  ReportSummary out;
  ReportOptions o = options;
  o.curve_points = std::max(2, o.curve_points);
  const ReportFit& primary = in.fits[0];
  const model::CharacteristicsU cu =
      model::ComputeCharacteristicsU(primary.summary.Estimate(), in.voltage);
  for (const ReportRun& r : in.runs) {
    if (r.in_primary_fit && !r.prediction) {
      out.notes.push_back("run " + std::to_string(r.record.id) + ": no fitted curve (" +
                          r.no_prediction_reason + ")");
    }
  }
  std::string body;
  body += Header(in);
  body += Cards(primary, cu, in.voltage);
  body += Cautions(primary, in.voltage);
  body += MeasuredSection(in);
  body += ConstantsSection(primary);
  body += CharacteristicsSection(in, cu, o, &out);
  body += CompareSection(in);
  body += RunsSection(in, &out);
  body += MethodSection(primary);
  out.html = HtmlPage("Motor " + in.motor.label + " — rotorbench report", body);
  return out;
}

}  // namespace rb::report
