// rotorbench rewind plan | suggest | verify | show | wires
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <memory>

#include "cli/context.h"
#include "cli/output.h"
#include "fit/fit.h"
#include "model/units.h"
#include "rewind/rewind.h"

namespace rb::cli {
namespace {

using nlohmann::json;

// ---- Options shared by plan and suggest -----------------------------------------------

struct BaselineOpts {
  std::optional<std::int64_t> fit_id;
  std::string motor;
  std::optional<double> np_resistance, np_kv, np_no_load_current, np_voltage;
  double np_tolerance_pct = 10;
};

struct ArmatureOpts {
  int coils = 3;
  std::optional<double> stack_mm, tooth_mm, build_mm, slot_mm2;
  double brush_fraction = 0.2;
};

void AddBaselineOptions(CLI::App* c, BaselineOpts* b) {
  c->add_option("--from-fit", b->fit_id, "Baseline: a stored fit of the motor as it is now");
  c->add_option("--from-motor", b->motor, "Baseline: the latest stored fit of this motor");
  c->add_option("--nameplate-resistance", b->np_resistance,
                "Baseline from catalogue data: terminal resistance [ohm]");
  c->add_option("--nameplate-kv", b->np_kv, "Baseline from catalogue data: Kv [rpm/V]");
  c->add_option("--nameplate-no-load-current", b->np_no_load_current,
                "Baseline from catalogue data: no-load current [A]");
  c->add_option("--nameplate-voltage", b->np_voltage, "Catalogue data: rated voltage [V]");
  c->add_option("--nameplate-tolerance", b->np_tolerance_pct,
                "Catalogue data: standard uncertainty of each value [%] (default 10)");
}

void AddArmatureOptions(CLI::App* c, ArmatureOpts* a) {
  c->add_option("--coils", a->coils, "Coils (= slots = commutator segments); default 3");
  c->add_option("--stack-length", a->stack_mm,
                "Armature stack length incl. end insulation [mm] (for R from dimensions)");
  c->add_option("--tooth-width", a->tooth_mm, "Width of the tooth a coil sits on [mm]");
  c->add_option("--build-depth", a->build_mm, "Depth of the old coil around the tooth [mm]");
  c->add_option("--slot-area", a->slot_mm2, "Usable cross-section of one slot [mm²]");
  c->add_option("--brush-fraction", a->brush_fraction,
                "Brush width as a fraction of a segment pitch (default 0.2)");
}

model::ArmatureDims Dims(const ArmatureOpts& a) {
  model::ArmatureDims d;
  if (a.stack_mm) d.stack_length = units::MmToMetre(*a.stack_mm);
  if (a.tooth_mm) d.tooth_width = units::MmToMetre(*a.tooth_mm);
  if (a.build_mm) d.build_depth = units::MmToMetre(*a.build_mm);
  if (a.slot_mm2) d.slot_area = units::Mm2ToMetre2(*a.slot_mm2);
  return d;
}

Result<fit::FitSummary> LatestFit(storage::Database& db, const std::string& label,
                                  std::int64_t* fit_id) {
  Result<storage::Motor> m = db.FindMotor(label);
  if (!m.ok()) return m.status();
  Result<std::vector<storage::FitRecord>> fits = db.ListFits(m->id);
  if (!fits.ok()) return fits.status();
  if (fits->empty()) {
    return Status::FailedPrecondition(fmt::format(
        "motor '{}' has no stored fit; fit it first, or give --nameplate-resistance and "
        "--nameplate-kv", label));
  }
  const auto latest = std::max_element(
      fits->begin(), fits->end(),
      [](const storage::FitRecord& a, const storage::FitRecord& b) { return a.id < b.id; });
  *fit_id = latest->id;
  return fit::LoadFit(db, latest->id);
}

/// The baseline and, when known, the motor it belongs to.
Result<rewind::Baseline> LoadBaseline(const Context& ctx, const BaselineOpts& o,
                                      std::optional<std::int64_t>* motor_id) {
  const int sources = (o.fit_id ? 1 : 0) + (o.motor.empty() ? 0 : 1) +
                      (o.np_resistance || o.np_kv ? 1 : 0);
  if (sources != 1) {
    return Status::InvalidArgument(
        "give one baseline: --from-fit ID, --from-motor LABEL, or --nameplate-resistance "
        "with --nameplate-kv");
  }
  if (o.np_resistance || o.np_kv) {
    if (!o.np_resistance || !o.np_kv) {
      return Status::InvalidArgument(
          "a nameplate baseline needs both --nameplate-resistance and --nameplate-kv");
    }
    if (!(*o.np_kv > 0)) return Status::InvalidArgument("--nameplate-kv must be > 0");
    rewind::Nameplate n;
    n.R = *o.np_resistance;
    n.Ke = units::KvRpmPerVoltToKe(*o.np_kv);
    n.no_load_current = o.np_no_load_current.value_or(0.0);
    n.voltage = o.np_voltage.value_or(NAN);
    n.relative_tolerance = o.np_tolerance_pct / 100.0;
    return rewind::BaselineFromNameplate(n);
  }
  Result<storage::Database> db = ctx.OpenDb(false);
  if (!db.ok()) return db.status();
  std::int64_t id = 0;
  Result<fit::FitSummary> f = Status::NotFound("");
  if (o.fit_id) {
    id = *o.fit_id;
    f = fit::LoadFit(*db, id);
  } else {
    f = LatestFit(*db, o.motor, &id);
  }
  if (!f.ok()) return f.status();
  if (Result<storage::Motor> m = db->FindMotor(f->motor); m.ok()) *motor_id = m->id;
  return rewind::BaselineFromFit(*f, id);
}

Result<model::Winding> Winding(const std::string& flag, const std::string& spec, int coils) {
  Result<model::Winding> w = model::ParseWinding(spec, coils);
  if (!w.ok()) return w.status().WithPrefix(flag);
  return w;
}

// ---- Printing in trade units ----------------------------------------------------------

/// v with `digits` significant digits in plain notation (no exponent for ordinary sizes).
std::string Sig(double v, int digits = 4) {
  if (!std::isfinite(v)) return "-";
  if (v == 0) return "0";
  const double mag = std::floor(std::log10(std::fabs(v)));
  if (mag < -3 || mag >= 8) return Num(v, digits);
  return fmt::format("{:.{}f}", v, static_cast<int>(std::max(0.0, digits - 1 - mag)));
}

/// "value ± u", both rounded where u has two significant digits.
std::string VU(double v, double u, int digits = 4) {
  if (!std::isfinite(v)) return "-";
  if (!(u > 0) || !std::isfinite(u)) return Sig(v, digits);
  const double mag = std::floor(std::log10(u));
  if (mag < -6 || mag >= 8) return Num(v, digits) + " ± " + Num(u, 2);
  const int decimals = static_cast<int>(std::max(0.0, 1 - mag));
  return fmt::format("{:.{}f} ± {:.{}f}", v, decimals, u, decimals);
}

struct Shown {
  std::string label, unit;
  double value, u;
};

/// A parameter (JSON name, SI) as people read it.
Shown Show(const std::string& name, double v, double u) {
  if (name == "R_ohm") return {"R", "Ω", v, u};
  if (name == "Ke_V_s_per_rad") {
    const double kv = v > 0 ? units::KeToKvRpmPerVolt(v) : NAN;
    return {"Kv", "rpm/V", kv, v > 0 ? kv * u / v : 0};
  }
  if (name == "Tc_N_m") return {"Tc", "mN·m", units::NmToMilliNm(v), units::NmToMilliNm(u)};
  if (name == "b_N_m_s_per_rad") {
    return {"b", "mN·m/krpm", units::ViscousToMilliNmPerKrpm(v), units::ViscousToMilliNmPerKrpm(u)};
  }
  if (name == "J_kg_m2") return {"J", "g·cm²", units::KgM2ToGCm2(v), units::KgM2ToGCm2(u)};
  if (name == "L_H") return {"L", "mH", units::HenryToMilliHenry(v), units::HenryToMilliHenry(u)};
  if (name == "Vb_V") return {"Vb", "V", v, u};
  if (name == "no_load_speed_rad_s") {
    return {"no-load speed", "rpm", units::RadPerSecToRpm(v), units::RadPerSecToRpm(u)};
  }
  if (name == "no_load_current_A") return {"no-load current", "A", v, u};
  if (name == "stall_current_A") return {"stall current", "A", v, u};
  if (name == "stall_torque_N_m") {
    return {"stall torque", "mN·m", units::NmToMilliNm(v), units::NmToMilliNm(u)};
  }
  if (name == "max_power_W") return {"max power", "W", v, u};
  if (name == "max_efficiency") return {"max efficiency", "%", 100 * v, 100 * u};
  if (name == "loaded_speed_rad_s") {
    return {"speed on the load", "rpm", units::RadPerSecToRpm(v), units::RadPerSecToRpm(u)};
  }
  return {name, "SI", v, u};
}

std::string WireLine(const model::Winding& w) {
  const model::Wire& x = w.wire;
  return fmt::format(
      "{} {}: bare {:.4g} mm ({:.4g}–{:.4g}), over enamel {:.4g} mm ({}), {:.4g} Ω/m at 20 °C",
      w.Spec(), model::InsulationName(x.insulation), units::MetreToMm(x.d_nom),
      units::MetreToMm(x.d_min), units::MetreToMm(x.d_max), units::MetreToMm(x.od_nom),
      model::DiameterSourceName(x.od_source), x.ResistancePerMetre20());
}

void PrintPlan(const rewind::Plan& plan) {
  const rewind::Prediction& p = plan.prediction;
  const model::MotorEstimate& b = p.baseline.estimate;
  const model::MotorEstimate& n = p.predicted;
  const double volts = p.options.voltage;
  fmt::print("rewind plan{} — {} → {} ({} coils), baseline: {}{}\n",
             plan.id > 0 ? fmt::format(" {}", plan.id) : std::string(),
             p.old_winding.Spec(), p.new_winding.Spec(), p.new_winding.coils, p.baseline.source,
             p.baseline.motor.empty() ? std::string() : " of motor " + p.baseline.motor);
  fmt::print("± is the standard uncertainty (1σ); R {}; figures at {} V\n\n",
             p.baseline.r_at_20C ? "at 20 °C" : "as measured", Num(volts, 4));
  Table t({"", "baseline " + p.old_winding.Spec(), "predicted " + p.new_winding.Spec(), "change"});
  auto sd = [](const model::MotorEstimate& e, int i) { return std::sqrt(std::max(0.0, e.cov(i, i))); };
  auto param_row = [&](int i) {
    const std::string name(model::kParamNames[static_cast<size_t>(i)]);
    const Shown o = Show(name, model::Get(b.value, i), sd(b, i));
    const Shown w = Show(name, model::Get(n.value, i), sd(n, i));
    t.Row({o.label + " [" + o.unit + "]", VU(o.value, o.u), VU(w.value, w.u),
           o.value != 0 ? "×" + Sig(w.value / o.value, 3) : "-"});
  };
  param_row(model::kR);
  param_row(model::kKe);
  t.Row({"Kt [mN·m/A]", VU(units::NmPerAToMilliNmPerA(b.value.Kt()), units::NmPerAToMilliNmPerA(sd(b, model::kKe))),
         VU(units::NmPerAToMilliNmPerA(n.value.Kt()), units::NmPerAToMilliNmPerA(sd(n, model::kKe))),
         "×" + Sig(n.value.Kt() / b.value.Kt(), 3)});
  if (b.value.L > 0) param_row(model::kL);
  const std::pair<model::CharacteristicIndex, const char*> figs[] = {
      {model::kNoLoadSpeed, "no_load_speed_rad_s"}, {model::kNoLoadCurrent, "no_load_current_A"},
      {model::kStallCurrent, "stall_current_A"},    {model::kStallTorque, "stall_torque_N_m"},
      {model::kMaxPower, "max_power_W"},            {model::kMaxEfficiency, "max_efficiency"}};
  for (auto [idx, name] : figs) {
    const model::Uncertain x = p.baseline_char.Get(idx), y = p.predicted_char.Get(idx);
    const Shown o = Show(name, x.value, x.u), w = Show(name, y.value, y.u);
    t.Row({o.label + " [" + o.unit + "]", VU(o.value, o.u), VU(w.value, w.u),
           o.value != 0 ? "×" + Sig(w.value / o.value, 3) : "-"});
  }
  t.Print();
  fmt::print("  (J, Tc, b and Vb are kept: same bearings, brushes and magnets)\n");

  fmt::print("\nslot fill: {} — {}\n", rewind::FillVerdictName(p.fill.verdict), p.fill.reason);
  fmt::print("  old {}\n  new {}\n", WireLine(p.old_winding), WireLine(p.new_winding));
  if (p.r_geometry_old && p.r_geometry_new) {
    fmt::print("  R between the brushes from the dimensions (20 °C): old {} Ω (measured {} Ω), "
               "new {} Ω\n",
               Sig(*p.r_geometry_old, 4), Sig(b.value.R, 4), Sig(*p.r_geometry_new, 4));
  }
  if (plan.load && plan.loaded) {
    const rewind::FanLoadEstimate& l = *plan.load;
    const rewind::LoadedPrediction& lp = *plan.loaded;
    fmt::print("\non the fan load{}: T = c·ω², c = {} ± {} µN·m per (krad/s)²; supply {} V "
               "behind {} Ω\n",
               plan.load_run_id ? fmt::format(" of run {}", *plan.load_run_id) : std::string(),
               Sig(l.c * 1e12, 4), Sig(l.c_u * 1e12, 2), Num(l.v_source, 4), Sig(l.r_source, 3));
    Table lt({"", "measured (run)", "model, old winding", "predicted, new winding"});
    lt.Row({"speed [rpm]", Sig(units::RadPerSecToRpm(l.speed), 5),
            Sig(units::RadPerSecToRpm(lp.baseline.speed), 5),
            VU(units::RadPerSecToRpm(lp.predicted.speed), units::RadPerSecToRpm(lp.speed_u), 5)});
    lt.Row({"current [A]", Sig(l.current, 4), Sig(lp.baseline.current, 4),
            VU(lp.predicted.current, lp.current_u)});
    lt.Row({"shaft power [W]", "-", Sig(lp.baseline.power_out, 4),
            VU(lp.predicted.power_out, lp.power_u)});
    lt.Print();
  }
  if (!p.notes.empty()) {
    fmt::print("\nnotes:\n");
    for (const std::string& s : p.notes) fmt::print("  - {}\n", s);
  }
  fmt::print("\n{}\n", rewind::SafetyNote());
}

}  // namespace

void AddRewindCommands(CLI::App& app, Context& ctx) {
  CLI::App* rw = app.add_subcommand(
      "rewind", "Plan a rewind, check the slot fill, suggest windings, verify the result");
  rw->require_subcommand(1);

  // ---- plan
  struct PlanOpts {
    BaselineOpts base;
    ArmatureOpts arm;
    std::string old_spec, new_spec;
    std::optional<double> voltage;
    std::optional<std::int64_t> load_run;
    bool json = false;
  };
  auto po = std::make_shared<PlanOpts>();
  CLI::App* p = rw->add_subcommand(
      "plan", "Predict what a new winding does and whether it fits; stores the plan");
  AddBaselineOptions(p, &po->base);
  p->add_option("--old", po->old_spec, "Winding now: TURNSxWIRE, e.g. 60xAWG30 or 48x0.3mm")
      ->required();
  p->add_option("--new", po->new_spec, "Planned winding, same form (TURNSxSTRANDSxWIRE too)")
      ->required();
  p->add_option("--voltage", po->voltage,
                "Supply for the figures [V] (default: highest voltage of the fitted runs)");
  p->add_option("--load-run", po->load_run,
                "A loaded (fan) run of the motor: estimate the load and predict the rewound "
                "motor on it");
  AddArmatureOptions(p, &po->arm);
  p->add_flag("--json", po->json, "Machine-readable output (SI values)");
  p->callback([&ctx, po] {
    ctx.action = [&ctx, po]() -> Status {
      Result<model::Winding> old_w = Winding("--old", po->old_spec, po->arm.coils);
      if (!old_w.ok()) return old_w.status();
      Result<model::Winding> new_w = Winding("--new", po->new_spec, po->arm.coils);
      if (!new_w.ok()) return new_w.status();
      std::optional<std::int64_t> motor_id;
      Result<rewind::Baseline> base = LoadBaseline(ctx, po->base, &motor_id);
      if (!base.ok()) return base.status();
      rewind::PlanOptions o;
      o.voltage = po->voltage.value_or(base->typical_voltage);
      if (!(o.voltage > 0)) {
        return Status::InvalidArgument("--voltage: give the supply voltage (the baseline has none)");
      }
      o.dims = Dims(po->arm);
      o.brush_fraction = po->arm.brush_fraction;
      Result<rewind::Prediction> pred = rewind::PredictRewind(*base, *old_w, *new_w, o);
      if (!pred.ok()) return pred.status();
      rewind::Plan plan;
      plan.prediction = std::move(*pred);

      Result<storage::Database> db = ctx.OpenDb(true);
      if (!db.ok()) return db.status();
      if (po->load_run) {
        Result<storage::Run> run = db->GetRun(*po->load_run);
        if (!run.ok()) return run.status().WithPrefix("--load-run");
        if (run->kind != model::RunKind::kLoaded) {
          return Status::InvalidArgument(fmt::format(
              "--load-run {}: run {} is a '{}' run; expected a 'loaded' run (the motor driving "
              "its fan or disc)", *po->load_run, run->id, model::RunKindName(run->kind)));
        }
        if (!base->motor.empty() && run->motor_label != base->motor) {
          return Status::InvalidArgument(fmt::format(
              "--load-run {}: the run belongs to motor '{}', the baseline to '{}'",
              *po->load_run, run->motor_label, base->motor));
        }
        Result<std::vector<model::Sample>> samples = db->ReadSamples(run->id);
        if (!samples.ok()) return samples.status();
        Result<rewind::FanLoadEstimate> load =
            rewind::EstimateFanLoad(base->estimate, *samples, run->nominal_voltage);
        if (!load.ok()) return load.status().WithPrefix(fmt::format("--load-run {}", run->id));
        plan.load = *load;
        plan.load_run_id = run->id;
        plan.loaded = rewind::PredictLoaded(plan.prediction, *load);
      }
      Result<std::int64_t> id = rewind::StorePlan(*db, plan, motor_id);
      if (!id.ok()) return id.status();
      plan.id = *id;
      if (po->json) {
        PrintJson(rewind::PlanToJson(plan));
      } else {
        PrintPlan(plan);
        fmt::print("\nstored as plan {} in {}\n", plan.id, ctx.db_path);
      }
      return Status::Ok();
    };
  });

  // ---- show
  struct ShowOpts {
    std::int64_t plan = 0;
    bool json = false;
  };
  auto so = std::make_shared<ShowOpts>();
  CLI::App* s = rw->add_subcommand("show", "Show a stored rewind plan");
  s->add_option("--plan", so->plan, "Plan id")->required();
  s->add_flag("--json", so->json, "Machine-readable output (SI values)");
  s->callback([&ctx, so] {
    ctx.action = [&ctx, so]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<rewind::Plan> plan = rewind::LoadPlan(*db, so->plan);
      if (!plan.ok()) return plan.status();
      if (so->json) {
        PrintJson(rewind::PlanToJson(*plan));
      } else {
        PrintPlan(*plan);
      }
      return Status::Ok();
    };
  });

  // ---- suggest
  struct SuggestOpts {
    BaselineOpts base;
    ArmatureOpts arm;
    std::string old_spec, target_speed, wires = "all";
    std::optional<double> target_kv, max_current, voltage;
    double tolerance_pct = 5;
    int max_strands = 2, limit = 10;
    bool json = false;
  };
  auto sg = std::make_shared<SuggestOpts>();
  CLI::App* g = rw->add_subcommand(
      "suggest", "List windings that reach a Kv or a no-load speed and fit the slots");
  AddBaselineOptions(g, &sg->base);
  g->add_option("--old", sg->old_spec, "Winding now: TURNSxWIRE")->required();
  auto* kv = g->add_option("--target-kv", sg->target_kv, "Target Kv [rpm/V]");
  auto* spd = g->add_option("--target-speed", sg->target_speed,
                            "Target no-load speed as RPM@V, e.g. 12000@7.4");
  kv->excludes(spd);
  g->add_option("--max-current", sg->max_current, "Limit on the stall current at the voltage [A]");
  g->add_option("--voltage", sg->voltage,
                "Supply for the figures and the current limit [V] (default: the baseline's)");
  g->add_option("--tolerance", sg->tolerance_pct, "Accepted miss of the target [%] (default 5)");
  g->add_option("--max-strands", sg->max_strands, "Most wires in hand to consider (default 2)");
  g->add_option("--wires", sg->wires, "Catalogue: awg, metric or all (default all)");
  g->add_option("--limit", sg->limit, "Show at most this many (default 10)");
  AddArmatureOptions(g, &sg->arm);
  g->add_flag("--json", sg->json, "Machine-readable output (SI values)");
  g->callback([&ctx, sg] {
    ctx.action = [&ctx, sg]() -> Status {
      Result<model::Winding> old_w = Winding("--old", sg->old_spec, sg->arm.coils);
      if (!old_w.ok()) return old_w.status();
      std::optional<std::int64_t> motor_id;
      Result<rewind::Baseline> base = LoadBaseline(ctx, sg->base, &motor_id);
      if (!base.ok()) return base.status();
      rewind::SuggestTarget t;
      t.voltage = sg->voltage.value_or(base->typical_voltage);
      if (sg->target_kv) {
        if (!(*sg->target_kv > 0)) return Status::InvalidArgument("--target-kv must be > 0");
        t.kind = rewind::SuggestTarget::Kind::kKe;
        t.value = units::KvRpmPerVoltToKe(*sg->target_kv);
      } else if (!sg->target_speed.empty()) {
        const size_t at = sg->target_speed.find('@');
        double rpm = NAN, v = NAN;
        try {
          if (at == std::string::npos) throw std::invalid_argument("no @");
          size_t used = 0;
          rpm = std::stod(sg->target_speed.substr(0, at), &used);
          if (used != at) throw std::invalid_argument("rpm");
          v = std::stod(sg->target_speed.substr(at + 1), &used);
          if (used != sg->target_speed.size() - at - 1) throw std::invalid_argument("volts");
        } catch (const std::exception&) {
          return Status::InvalidArgument("--target-speed " + sg->target_speed +
                                         ": expected RPM@V, e.g. 12000@7.4");
        }
        if (!(rpm > 0) || !(v > 0)) {
          return Status::InvalidArgument("--target-speed " + sg->target_speed +
                                         ": speed and voltage must be > 0");
        }
        t.kind = rewind::SuggestTarget::Kind::kNoLoadSpeed;
        t.value = units::RpmToRadPerSec(rpm);
        t.voltage = v;
      } else {
        return Status::InvalidArgument("give --target-kv X or --target-speed RPM@V");
      }
      if (!(t.voltage > 0)) {
        return Status::InvalidArgument("--voltage: give the supply voltage (the baseline has none)");
      }
      t.max_stall_current = sg->max_current;
      rewind::SuggestOptions o;
      if (sg->wires == "awg") {
        o.catalogue.metric = false;
      } else if (sg->wires == "metric") {
        o.catalogue.awg = false;
      } else if (sg->wires != "all") {
        return Status::InvalidArgument("--wires " + sg->wires + ": expected awg, metric or all");
      }
      o.max_strands = sg->max_strands;
      o.tolerance = sg->tolerance_pct / 100.0;
      o.limit = sg->limit;
      o.plan.dims = Dims(sg->arm);
      o.plan.brush_fraction = sg->arm.brush_fraction;
      Result<std::vector<rewind::Suggestion>> list = rewind::SuggestWindings(*base, *old_w, t, o);
      if (!list.ok()) return list.status();
      if (sg->json) {
        json arr = json::array();
        for (const rewind::Suggestion& x : *list) {
          rewind::Plan pl;
          pl.prediction = x.prediction;
          json j = rewind::PlanToJson(pl);
          arr.push_back({{"winding", x.prediction.new_winding.Spec()},
                         {"achieved", x.achieved},
                         {"relative_error", x.error},
                         {"predicted", j["predicted"]},
                         {"fill", j["fill"]},
                         {"characteristics", j["characteristics"]["predicted"]}});
        }
        PrintJson({{"target", {{"kind", t.kind == rewind::SuggestTarget::Kind::kKe ? "Ke_V_s_per_rad" : "no_load_speed_rad_s"},
                               {"value", t.value}, {"voltage_V", t.voltage}}},
                   {"suggestions", arr}});
        return Status::Ok();
      }
      if (list->empty()) {
        fmt::print("no winding in the catalogue reaches the target within {} % and fits the "
                   "slots{}; widen --tolerance, allow more --max-strands, or relax the limit\n",
                   Sig(sg->tolerance_pct, 3), t.max_stall_current ? " under the current limit" : "");
        return Status::Ok();
      }
      fmt::print("windings for {} from {} (baseline: {}), figures at {} V; best first\n\n",
                 t.kind == rewind::SuggestTarget::Kind::kKe
                     ? fmt::format("Kv {} rpm/V", Sig(*sg->target_kv, 5))
                     : fmt::format("{} rpm no-load at {} V", Sig(units::RadPerSecToRpm(t.value), 5),
                                   Num(t.voltage, 4)),
                 old_w->Spec(), base->source, Num(t.voltage, 4));
      Table tb({"#", "winding", "fill", "space", "Kv [rpm/V]", "no-load [rpm]", "stall [A]",
                "max power [W]", "R [Ω]", "miss"});
      int k = 0;
      for (const rewind::Suggestion& x : *list) {
        const rewind::Prediction& pr = x.prediction;
        tb.Row({std::to_string(++k), pr.new_winding.Spec() + ":" +
                    std::string(model::InsulationName(pr.new_winding.wire.insulation)),
                rewind::FillVerdictName(pr.fill.verdict), Sig(100 * pr.fill.ratio, 3) + " %",
                Sig(units::KeToKvRpmPerVolt(pr.predicted.value.Ke), 4),
                Sig(units::RadPerSecToRpm(pr.predicted_char.nominal.no_load_speed), 5),
                Sig(pr.predicted_char.nominal.stall_current, 3),
                Sig(pr.predicted_char.nominal.max_power.power_out, 3),
                Sig(pr.predicted.value.R, 3), fmt::format("{:+.1f} %", 100 * x.error)});
      }
      tb.Print();
      fmt::print("\nspace = room the winding needs relative to the old one. Plan one with "
                 "`rotorbench rewind plan ... --new WINDING`.\n{}\n", rewind::SafetyNote());
      return Status::Ok();
    };
  });

  // ---- verify
  struct VerifyOpts {
    std::int64_t plan = 0;
    std::string motor;
    std::optional<std::int64_t> fit_id, load_run;
    bool refit = false, json = false;
  };
  auto vo = std::make_shared<VerifyOpts>();
  CLI::App* v = rw->add_subcommand(
      "verify", "Compare the rewound motor's fit with the plan; verdict and likely causes");
  v->add_option("--plan", vo->plan, "Plan id (from `rewind plan`)")->required();
  v->add_option("--motor", vo->motor, "The rewound motor's label")->required();
  v->add_option("--fit", vo->fit_id, "Use this stored fit of the rewound motor");
  v->add_flag("--refit", vo->refit, "Fit the motor's runs now even if it has a stored fit");
  v->add_option("--load-run", vo->load_run,
                "A loaded run of the rewound motor on the plan's fan load: check its speed");
  v->add_flag("--json", vo->json, "Machine-readable output (SI values)");
  v->callback([&ctx, vo] {
    ctx.action = [&ctx, vo]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(true);
      if (!db.ok()) return db.status();
      Result<rewind::Plan> plan = rewind::LoadPlan(*db, vo->plan);
      if (!plan.ok()) return plan.status();
      Result<storage::Motor> motor = db->FindMotor(vo->motor);
      if (!motor.ok()) return motor.status();
      Result<fit::FitSummary> after = Status::NotFound("");
      std::int64_t fit_id = 0;
      if (vo->fit_id) {
        fit_id = *vo->fit_id;
        after = fit::LoadFit(*db, fit_id);
        if (after.ok() && after->motor != vo->motor) {
          return Status::InvalidArgument(fmt::format(
              "--fit {}: that fit is of motor '{}', not '{}'", fit_id, after->motor, vo->motor));
        }
      } else {
        Result<std::vector<storage::FitRecord>> fits = db->ListFits(motor->id);
        if (!fits.ok()) return fits.status();
        if (vo->refit || fits->empty()) {
          return Status::Unsupported(fmt::format(
              "motor '{}': fitting from this command is not available in this build; fit the "
              "motor first and pass --fit ID", vo->motor));
        }
        after = LatestFit(*db, vo->motor, &fit_id);
      }
      if (!after.ok()) return after.status();
      std::vector<model::Sample> loaded;
      if (vo->load_run) {
        Result<storage::Run> run = db->GetRun(*vo->load_run);
        if (!run.ok()) return run.status().WithPrefix("--load-run");
        if (run->motor_id != motor->id || run->kind != model::RunKind::kLoaded) {
          return Status::InvalidArgument(fmt::format(
              "--load-run {}: expected a 'loaded' run of motor '{}'", *vo->load_run, vo->motor));
        }
        Result<std::vector<model::Sample>> s = db->ReadSamples(run->id);
        if (!s.ok()) return s.status();
        loaded = std::move(*s);
      }
      const rewind::Verification ver =
          rewind::VerifyRewind(*plan, *after, vo->load_run ? &loaded : nullptr);
      auto check_json = [](const rewind::ParamCheck& c) {
        return json{{"name", c.name}, {"predicted", JsonNum(c.predicted)},
                    {"predicted_u", JsonNum(c.predicted_u)}, {"measured", JsonNum(c.measured)},
                    {"measured_u", JsonNum(c.measured_u)}, {"z", JsonNum(c.z)},
                    {"verdict", c.verdict}, {"decides", c.decides}};
      };
      if (vo->json) {
        json j = {{"plan_id", vo->plan}, {"motor", vo->motor}, {"fit_id", fit_id},
                  {"verdict", ver.verdict}, {"parameters", json::array()},
                  {"figures", json::array()}, {"hints", json::array()}};
        for (const auto& c : ver.params) j["parameters"].push_back(check_json(c));
        for (const auto& c : ver.figures) j["figures"].push_back(check_json(c));
        for (const auto& h : ver.hints) {
          j["hints"].push_back({{"cause", h.cause}, {"detail", h.detail},
                                {"distance", JsonNum(h.distance)}});
        }
        j["loaded_speed"] = ver.loaded_speed ? check_json(*ver.loaded_speed) : json(nullptr);
        PrintJson(j);
        return Status::Ok();
      }
      fmt::print("rewind check of motor {} (fit {}) against plan {} ({} → {})\n", vo->motor,
                 fit_id, vo->plan, plan->prediction.old_winding.Spec(),
                 plan->prediction.new_winding.Spec());
      fmt::print("± is the standard uncertainty (1σ); z = difference / combined uncertainty; "
                 "|z| ≤ 2 matches, > 3 does not\n\n");
      Table t({"", "predicted", "measured", "z", "verdict"});
      auto row = [&t](const rewind::ParamCheck& c) {
        const Shown a = Show(c.name, c.predicted, c.predicted_u);
        const Shown b = Show(c.name, c.measured, c.measured_u);
        t.Row({a.label + " [" + a.unit + "]" + (c.decides ? " *" : ""), VU(a.value, a.u),
               VU(b.value, b.u), c.verdict == "not compared" ? "-" : fmt::format("{:+.1f}", c.z),
               c.verdict});
      };
      for (const auto& c : ver.params) row(c);
      for (const auto& c : ver.figures) row(c);
      if (ver.loaded_speed) row(*ver.loaded_speed);
      t.Print();
      fmt::print("  * decides the verdict (what the winding sets); figures at {} V\n\n",
                 Num(plan->prediction.options.voltage, 4));
      fmt::print("verdict: {}\n", ver.verdict);
      if (!ver.hints.empty()) {
        fmt::print("\nlikely causes, most likely first:\n");
        for (const rewind::Hint& h : ver.hints) fmt::print("  - {}: {}\n", h.cause, h.detail);
      }
      fmt::print("\n{}\n", rewind::SafetyNote());
      return Status::Ok();
    };
  });

  // ---- wires
  struct WiresOpts {
    bool json = false;
  };
  auto wo = std::make_shared<WiresOpts>();
  CLI::App* w = rw->add_subcommand("wires", "List the magnet-wire catalogue the planner uses");
  w->add_flag("--json", wo->json, "Machine-readable output (SI values)");
  w->callback([&ctx, wo] {
    ctx.action = [wo]() -> Status {
      const std::vector<model::Wire> all = model::WireCatalogue();
      if (wo->json) {
        json arr = json::array();
        for (const model::Wire& x : all) {
          arr.push_back({{"name", x.Name()}, {"insulation", model::InsulationName(x.insulation)},
                         {"bare_diameter_m", x.d_nom}, {"bare_min_m", x.d_min},
                         {"bare_max_m", x.d_max}, {"overall_diameter_m", x.od_nom},
                         {"overall_max_m", x.od_max},
                         {"overall_source", model::DiameterSourceName(x.od_source)},
                         {"ohm_per_m_20C", x.ResistancePerMetre20()}});
        }
        PrintJson(arr);
        return Status::Ok();
      }
      Table t({"wire", "bare [mm]", "bare [in]", "limits [mm]", "insulation", "over enamel [mm]",
               "source", "Ω/m (20 °C)"});
      for (const model::Wire& x : all) {
        t.Row({x.Name(), Sig(units::MetreToMm(x.d_nom), 4), Sig(units::MetreToInch(x.d_nom), 3),
               Sig(units::MetreToMm(x.d_min), 4) + "–" + Sig(units::MetreToMm(x.d_max), 4),
               std::string(model::InsulationName(x.insulation)), Sig(units::MetreToMm(x.od_nom), 4),
               std::string(model::DiameterSourceName(x.od_source)),
               Sig(x.ResistancePerMetre20(), 4)});
      }
      t.Print();
      fmt::print("\nAWG: ASTM B258; copper: IEC 60028 (1/58 Ω·mm²/m at 20 °C); enamel: NEMA MW "
                 "1000 single/heavy build and IEC 60317 grade 1/2 (Elektrisola data as encoded "
                 "in OpenMagnetics/MAS).\n");
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
