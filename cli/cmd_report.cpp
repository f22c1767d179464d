// rotorbench report | curves — what a fit means: an HTML report, or the figures in the terminal.
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <cmath>
#include <fstream>
#include <memory>

#include "cli/context.h"
#include "cli/output.h"
#include "report/report.h"

namespace rb::cli {
namespace {

using nlohmann::json;

/// The supply voltage for a fit's characteristics: as given, else the highest supply
/// setting among the fit's runs.
Result<double> VoltageFor(const fit::FitSummary& s, std::optional<double> given,
                          const std::string& what) {
  if (given) {
    if (!(*given > 0) || !std::isfinite(*given)) {
      return Status::InvalidArgument(
          fmt::format("--voltage {}: expected a supply voltage > 0 V", *given));
    }
    return *given;
  }
  double v = 0;
  for (const fit::RunFit& r : s.runs) {
    if (std::isfinite(r.nominal_voltage)) v = std::max(v, r.nominal_voltage);
  }
  if (!(v > 0)) {
    return Status::InvalidArgument(what +
                                   ": the fitted runs carry no supply setting; give --voltage V");
  }
  return v;
}

Status WriteText(const std::string& path, const std::string& text) {
  const std::string tmp = path + ".tmp";
  {
    std::ofstream f(tmp, std::ios::binary | std::ios::trunc);
    if (!f || !f.write(text.data(), static_cast<std::streamsize>(text.size())) || !f.flush()) {
      return Status::IOError(path + ": cannot write");
    }
  }
  if (std::rename(tmp.c_str(), path.c_str()) != 0) {
    std::remove(tmp.c_str());
    return Status::IOError(path + ": cannot replace the file");
  }
  return Status::Ok();
}

}  // namespace

/// Prints a fit's characteristics at voltage v as a terminal table (also used by `fit show`).
void PrintCharacteristics(const fit::FitSummary& s, double v) {
  const model::CharacteristicsU cu = model::ComputeCharacteristicsU(s.Estimate(), v);
  fmt::print("characteristics at {} V (± 1 standard uncertainty, delta method)\n",
             report::FormatSetting(v));
  Table t({"figure", "value ± u", "unit", "rel. u"});
  for (const report::FigureRow& r : report::CharacteristicRows()) {
    const model::Uncertain x = cu.Get(r.index);
    const report::Shown d = report::ToDisplay(r.unit, x.value, x.u);
    t.Row({std::string(r.sub ? "  " : "") + r.label, report::FormatWithU(d.value, d.u), r.unit.unit,
           report::FormatRelative(d.value, d.u)});
  }
  t.Print();
}

void AddReportCommands(CLI::App& app, Context& ctx) {
  // ---- report
  struct ReportOpts {
    std::string motor, out;
    std::vector<std::int64_t> fits;
    std::optional<double> voltage;
  };
  auto ro = std::make_shared<ReportOpts>();
  CLI::App* r = app.add_subcommand(
      "report", "Write a self-contained HTML report of a motor: constants, curves, runs");
  r->add_option("--motor", ro->motor, "Motor label")->required();
  r->add_option("--fit", ro->fits,
                "Fit id to report (repeat to overlay several; the first is the main one). "
                "Default: the newest fit, with older fits overlaid");
  r->add_option("--voltage", ro->voltage,
                "Supply voltage for the characteristics [V] (default: the highest supply "
                "setting of the fitted runs)");
  r->add_option("--out", ro->out, "HTML file to write")->required();
  r->callback([&ctx, ro] {
    ctx.action = [&ctx, ro]() -> Status {
      if (ro->voltage && (!(*ro->voltage > 0) || !std::isfinite(*ro->voltage))) {
        return Status::InvalidArgument(
            fmt::format("--voltage {}: expected a supply voltage > 0 V", *ro->voltage));
      }
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      report::CollectOptions co;
      co.motor = ro->motor;
      co.fit_ids = ro->fits;
      co.voltage = ro->voltage;
      Result<report::ReportInput> in = report::CollectReportInput(*db, co, fit::PredictRun);
      if (!in.ok()) return in.status();
      Result<report::ReportSummary> rep = report::BuildReport(*in);
      if (!rep.ok()) return rep.status();
      RB_RETURN_IF_ERROR(WriteText(ro->out, rep->html));
      for (const std::string& n : rep->notes) fmt::print("note: {}\n", n);
      fmt::print("wrote report of motor {} ({} plots, {} fit{}, characteristics at {} V) to {}\n",
                 ro->motor, rep->figure_ids.size(), in->fits.size(),
                 in->fits.size() == 1 ? "" : "s", report::FormatSetting(in->voltage), ro->out);
      return Status::Ok();
    };
  });

  // ---- curves
  struct CurvesOpts {
    std::int64_t fit = 0;
    std::optional<double> voltage;
    int points = 11;
    bool json = false;
  };
  auto co = std::make_shared<CurvesOpts>();
  CLI::App* c = app.add_subcommand(
      "curves", "A fit's characteristics at a supply voltage: operating points and curves");
  c->add_option("--fit", co->fit, "Fit id")->required();
  c->add_option("--voltage", co->voltage,
                "Supply voltage [V] (default: the highest supply setting of the fitted runs)");
  c->add_option("--points", co->points, "Curve points from no load to stall (default 11)")
      ->check(CLI::Range(2, 10001));
  c->add_flag("--json", co->json, "Machine-readable output (SI units)");
  c->callback([&ctx, co] {
    ctx.action = [&ctx, co]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<fit::FitSummary> s = fit::LoadFit(*db, co->fit);
      if (!s.ok()) return s.status().WithPrefix(fmt::format("--fit {}", co->fit));
      Result<double> v = VoltageFor(*s, co->voltage, fmt::format("fit {}", co->fit));
      if (!v.ok()) return v.status();
      const model::MotorEstimate e = s->Estimate();
      const model::CharacteristicsU cu = model::ComputeCharacteristicsU(e, *v);
      const model::CurvesU curves = model::CharacteristicCurvesU(e, *v, co->points);
      if (co->json) {
        json figs = json::object();
        for (const report::FigureRow& r : report::CharacteristicRows()) {
          const model::Uncertain x = cu.Get(r.index);
          figs[r.json_key] = {{"value", JsonNum(x.value)}, {"u", JsonNum(x.u)}};
        }
        json pts = json::array();
        for (size_t k = 0; k < curves.value.size(); ++k) {
          const auto& p = curves.value[k];
          const auto& u = curves.u[k];
          pts.push_back({{"torque_N_m", JsonNum(p.torque)},
                         {"speed_rad_s", JsonNum(p.speed)},
                         {"speed_u", JsonNum(u.speed)},
                         {"current_A", JsonNum(p.current)},
                         {"current_u", JsonNum(u.current)},
                         {"power_out_W", JsonNum(p.power_out)},
                         {"power_out_u", JsonNum(u.power_out)},
                         {"efficiency", JsonNum(p.efficiency)},
                         {"efficiency_u", JsonNum(u.efficiency)}});
        }
        PrintJson({{"fit", co->fit},
                   {"motor", s->motor},
                   {"voltage_V", *v},
                   {"uncertainty", "standard (1 sigma), delta method"},
                   {"figures", figs},
                   {"curve", pts}});
        return Status::Ok();
      }
      fmt::print("fit {} of motor {}\n\n", co->fit, s->motor);
      PrintCharacteristics(*s, *v);
      fmt::print("\ncurve from no load to stall\n");
      Table t({"torque mN·m", "speed rpm", "current A", "power W", "efficiency %"});
      for (size_t k = 0; k < curves.value.size(); ++k) {
        auto cell = [&](const report::DisplayUnit& unit, double value, double u) {
          const report::Shown d = report::ToDisplay(unit, value, u);
          return report::FormatWithU(d.value, d.u);
        };
        const auto& p = curves.value[k];
        const auto& u = curves.u[k];
        t.Row({report::FormatValue(report::TorqueUnit().from_si(p.torque), 4),
               cell(report::SpeedUnit(), p.speed, u.speed),
               cell(report::CurrentUnit(), p.current, u.current),
               cell(report::PowerUnit(), p.power_out, u.power_out),
               cell(report::EfficiencyUnit(), p.efficiency, u.efficiency)});
      }
      t.Print();
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
