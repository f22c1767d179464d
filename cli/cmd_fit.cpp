// rotorbench fit | fit list | fit show — fit a motor's constants to its runs, and show fits.
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <cmath>
#include <memory>
#include <optional>

#include "cli/context.h"
#include "cli/output.h"
#include "fit/fit.h"
#include "model/units.h"
#include "report/quantity.h"

namespace rb::cli {

void PrintCharacteristics(const fit::FitSummary& s, double v);  // cmd_report.cpp

namespace {

using nlohmann::json;

/// "value ± u unit" of one parameter in its trade unit; words when there is no number.
std::string Cell(const fit::ParamResult& p, const report::DisplayUnit& unit, bool trade = true) {
  if (!p.identified) return "not determined by these runs";
  if (!std::isfinite(p.value)) return "-";
  if (!p.fitted) return report::FormatValue(trade ? unit.from_si(p.value) : p.value) + " (held)";
  const report::Shown d = report::ToDisplay(unit, p.value, p.u_combined);
  return report::FormatWithU(d.value, d.u);
}

std::string Rel(const fit::ParamResult& p) {
  if (!p.identified || !p.fitted) return "";
  return report::FormatRelative(p.value, p.u_combined);
}

/// R in Ω, or in mΩ below 1 Ω (how small-motor windings are usually quoted).
report::DisplayUnit ResistanceFor(double r) {
  if (std::isfinite(r) && std::fabs(r) < 1.0) {
    return {"mΩ", [](double x) { return units::OhmToMilliOhm(x); }};
  }
  return report::ResistanceUnit();
}

void PrintParameters(const fit::FitSummary& s) {
  const auto& P = s.params;
  Table t({"constant", "value ± u", "unit", "rel. u"});
  const fit::ParamResult& R = P[model::kR];
  const report::DisplayUnit ru = ResistanceFor(R.value);
  const std::string r_label =
      s.temperature_C ? fmt::format("R (at {} °C)", report::FormatSetting(*s.temperature_C))
                      : std::string("R");
  t.Row({r_label, Cell(R, ru), ru.unit, Rel(R)});
  if (s.R20) {
    fit::ParamResult r20 = R;
    r20.value = *s.R20;
    r20.u_combined = s.R20_u.value_or(NAN);
    t.Row({"R at 20 °C", Cell(r20, ru), ru.unit, Rel(r20)});
  }
  const fit::ParamResult& ke = P[model::kKe];
  t.Row({"Kv", Cell(ke, report::KvUnit()), report::KvUnit().unit, Rel(ke)});
  t.Row({"Kt (= Ke)", Cell(ke, report::KtUnit()), report::KtUnit().unit, Rel(ke)});
  t.Row({"J", Cell(P[model::kJ], report::InertiaUnit()), report::InertiaUnit().unit,
         Rel(P[model::kJ])});
  t.Row({"Tc", Cell(P[model::kTc], report::TorqueUnit()), report::TorqueUnit().unit,
         Rel(P[model::kTc])});
  t.Row({"b", Cell(P[model::kB], report::ViscousUnit()), report::ViscousUnit().unit,
         Rel(P[model::kB])});
  t.Row({"L", Cell(P[model::kL], report::InductanceUnit()), report::InductanceUnit().unit,
         Rel(P[model::kL])});
  t.Row({"Vb", Cell(P[model::kVb], report::VoltageUnit()), report::VoltageUnit().unit,
         Rel(P[model::kVb])});
  t.Print();
  fmt::print("u: combined standard uncertainty (fit and instrument calibration, GUM); "
             "about 95 % of the truth lies within ±2u\n");
}

void PrintDiagnostics(const fit::FitSummary& s) {
  if (s.diagnostics.empty()) return;
  fmt::print("\n");
  for (const fit::Diagnostic& d : s.diagnostics) {
    const char* sev = d.severity == fit::Diagnostic::Severity::kError     ? "error"
                      : d.severity == fit::Diagnostic::Severity::kWarning ? "warning"
                                                                          : "note";
    fmt::print("{}: {}\n", sev, d.message);
    if (!d.suggestion.empty()) fmt::print("  what would help: {}\n", d.suggestion);
  }
}

void PrintRuns(const fit::FitSummary& s) {
  if (s.runs.empty()) return;
  fmt::print("\nresiduals per run (RMS of the readings kept; outliers set aside)\n");
  Table t({"run", "kind", "supply V", "channel", "readings", "RMS", "noise σ", "unit", "outliers"});
  for (const fit::RunFit& r : s.runs) {
    for (const fit::ChannelFit& c : r.channels) {
      // Speed in rpm, current in mA, voltage in mV: the sizes these residuals have.
      double f = 1e3;
      const char* unit = c.channel == "current" ? "mA" : "mV";
      if (c.channel == "speed") f = 1.0 / units::kRadPerSecPerRpm, unit = "rpm";
      t.Row({std::to_string(r.run_id), std::string(model::RunKindName(r.kind)),
             Num(r.nominal_voltage, 3), c.channel, std::to_string(c.n), Num(c.rms * f, 3),
             Num(c.sigma * f, 3), unit, std::to_string(c.outliers)});
    }
  }
  t.Print();
}

void PrintFit(const fit::FitSummary& s, std::optional<std::int64_t> id) {
  fmt::print("motor {}{}, model {}, {} run{}\n", s.motor,
             id ? fmt::format(" — fit {}", *id) : std::string(), s.model.Name(), s.runs.size(),
             s.runs.size() == 1 ? "" : "s");
  PrintParameters(s);
  PrintDiagnostics(s);
  PrintRuns(s);
  fmt::print("\nsolver: {} after {} iterations, {:.3f} s\n", s.termination, s.iterations,
             s.solve_seconds);
}

double HighestSupply(const fit::FitSummary& s) {
  double v = 0;
  for (const fit::RunFit& r : s.runs) {
    if (std::isfinite(r.nominal_voltage)) v = std::max(v, r.nominal_voltage);
  }
  return v;
}

}  // namespace

void AddFitCommands(CLI::App& app, Context& ctx) {
  struct FitOpts {
    std::string motor, model;
    std::vector<std::int64_t> runs;
    bool json = false;
  };
  auto fo = std::make_shared<FitOpts>();
  CLI::App* f = app.add_subcommand(
      "fit", "Fit the motor's constants to its runs and store the fit (or: fit list | show)");
  f->add_option("--motor", fo->motor, "Motor label");
  f->add_option("--runs", fo->runs, "Run ids to use, comma-separated (default: all finished runs)")
      ->delimiter(',');
  f->add_option("--model", fo->model,
                "Model terms: basic, basic+brush, basic+inductance, basic+brush+inductance "
                "(default: what the data supports)");
  f->add_flag("--json", fo->json, "Machine-readable output (SI units; Kv in rpm/V)");
  f->callback([&ctx, f, fo] {
    if (!f->get_subcommands().empty()) return;  // fit list / fit show
    ctx.action = [&ctx, fo]() -> Status {
      if (fo->motor.empty()) {
        return Status::InvalidArgument("fit: --motor LABEL is required (or use fit list | fit show ID)");
      }
      fit::FitOptions options;
      options.run_ids = fo->runs;
      if (!fo->model.empty()) {
        Result<fit::ModelSpec> m = fit::ModelSpec::Parse(fo->model);
        if (!m.ok()) return m.status();
        options.model = *m;
      }
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<fit::FitSummary> s = fit::FitMotor(*db, fo->motor, options);
      if (!s.ok()) return s.status();
      Result<std::int64_t> id = fit::StoreFit(*db, *s);
      if (!id.ok()) return id.status();
      if (fo->json) {
        json j = fit::ToJson(*s);
        j["fit_id"] = *id;
        PrintJson(j);
        return Status::Ok();
      }
      PrintFit(*s, *id);
      fmt::print("stored as fit {} in {}\n", *id, ctx.db_path);
      return Status::Ok();
    };
  });

  struct ListOpts {
    std::string motor;
    bool json = false;
  };
  auto lo = std::make_shared<ListOpts>();
  CLI::App* l = f->add_subcommand("list", "List stored fits, oldest first");
  l->add_option("--motor", lo->motor, "Only fits of this motor");
  l->add_flag("--json", lo->json, "Machine-readable output");
  l->callback([&ctx, lo] {
    ctx.action = [&ctx, lo]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      std::optional<std::int64_t> motor_id;
      if (!lo->motor.empty()) {
        Result<storage::Motor> m = db->FindMotor(lo->motor);
        if (!m.ok()) return m.status();
        motor_id = m->id;
      }
      Result<std::vector<storage::FitRecord>> fits = db->ListFits(motor_id);
      if (!fits.ok()) return fits.status();
      json arr = json::array();
      Table t({"fit", "motor", "created (UTC)", "model", "runs", "R Ω", "Kv rpm/V", "J g·cm²"});
      for (const storage::FitRecord& r : *fits) {
        Result<fit::FitSummary> s = fit::LoadFit(*db, r.id);
        if (!s.ok()) return s.status().WithPrefix(fmt::format("fit {}", r.id));
        const auto& P = s->params;
        const double kv = P[model::kKe].identified ? units::KeToKvRpmPerVolt(P[model::kKe].value) : NAN;
        if (lo->json) {
          arr.push_back({{"id", r.id}, {"motor", s->motor}, {"created_utc", r.created_utc},
                         {"model", r.model}, {"runs", r.run_ids},
                         {"R_ohm", JsonNum(P[model::kR].value)}, {"Kv_rpm_per_V", JsonNum(kv)},
                         {"J_kg_m2", JsonNum(P[model::kJ].value)}});
          continue;
        }
        t.Row({std::to_string(r.id), s->motor, r.created_utc.substr(0, 19), r.model,
               std::to_string(r.run_ids.size()), Num(P[model::kR].value),
               Num(kv), Num(units::KgM2ToGCm2(P[model::kJ].value))});
      }
      if (lo->json) {
        PrintJson(arr);
      } else if (t.empty()) {
        fmt::print("no fits{}; fit a motor with `rotorbench fit --motor LABEL`\n",
                   lo->motor.empty() ? "" : " of motor " + lo->motor);
      } else {
        t.Print();
      }
      return Status::Ok();
    };
  });

  struct ShowOpts {
    std::int64_t id = 0;
    std::optional<double> voltage;
    bool json = false;
  };
  auto so = std::make_shared<ShowOpts>();
  CLI::App* s = f->add_subcommand("show", "Show a stored fit: constants, diagnostics, characteristics");
  s->add_option("ID", so->id, "Fit id")->required();
  s->add_option("--voltage", so->voltage,
                "Supply voltage for the characteristics [V] (default: the highest supply "
                "setting of the fitted runs)");
  s->add_flag("--json", so->json, "Machine-readable output (the stored fit)");
  s->callback([&ctx, so] {
    ctx.action = [&ctx, so]() -> Status {
      if (so->voltage && !(std::isfinite(*so->voltage) && *so->voltage > 0)) {
        return Status::InvalidArgument(
            fmt::format("--voltage {}: expected a supply voltage > 0 V", *so->voltage));
      }
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<fit::FitSummary> fs = fit::LoadFit(*db, so->id);
      if (!fs.ok()) return fs.status().WithPrefix(fmt::format("fit {}", so->id));
      if (so->json) {
        json j = fit::ToJson(*fs);
        j["fit_id"] = so->id;
        PrintJson(j);
        return Status::Ok();
      }
      PrintFit(*fs, so->id);
      const double v = so->voltage.value_or(HighestSupply(*fs));
      fmt::print("\n");
      if (!(v > 0)) {
        fmt::print("no characteristics: the fitted runs carry no supply setting; give --voltage V\n");
      } else if (!fs->params[model::kR].identified || !fs->params[model::kKe].identified) {
        fmt::print("no characteristics: they need both R and Ke, which this fit does not give\n");
      } else {
        PrintCharacteristics(*fs, v);
      }
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
