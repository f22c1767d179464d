// The stored and printed form of a rewind plan, and the curves the report overlays.
#include <fmt/format.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "base/time_util.h"
#include "model/units.h"
#include "rewind/rewind.h"
#include "storage/storage.h"

namespace rb::rewind {
namespace {

using nlohmann::json;
using model::kNumParams;

constexpr const char* kFormat = "rotorbench-rewind-plan/1";

constexpr const char* kCharNames[model::kNumCharacteristics] = {
    "no_load_speed_rad_s",   "no_load_current_A",     "stall_current_A",
    "stall_torque_N_m",      "max_power_W",           "max_power_speed_rad_s",
    "max_power_torque_N_m",  "max_power_current_A",   "max_efficiency",
    "max_efficiency_speed_rad_s", "max_efficiency_torque_N_m", "max_efficiency_current_A",
    "motor_constant_N_m_per_sqrt_W", "mech_time_constant_s"};

json Num(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
double NumOr(const json& j, const char* key, double fallback = NAN) {
  if (!j.is_object() || !j.contains(key) || !j[key].is_number()) return fallback;
  return j[key].get<double>();
}

/// {NAME: value} with the fitter's names, plus Kt and Kv (rpm/V) views.
json ParamValues(const model::MotorParams& p) {
  json o = json::object();
  for (int i = 0; i < kNumParams; ++i) {
    o[std::string(model::kParamNames[static_cast<size_t>(i)])] = Num(model::Get(p, i));
  }
  o["Kt_N_m_per_A"] = Num(p.Kt());
  o["Kv_rpm_per_V"] = p.Ke > 0 ? Num(units::KeToKvRpmPerVolt(p.Ke)) : json(nullptr);
  return o;
}

json ParamUncertainties(const model::MotorEstimate& e) {
  json o = json::object();
  for (int i = 0; i < kNumParams; ++i) {
    o[std::string(model::kParamNames[static_cast<size_t>(i)])] =
        Num(std::sqrt(std::max(0.0, e.cov(i, i))));
  }
  const double uke = std::sqrt(std::max(0.0, e.cov(model::kKe, model::kKe)));
  o["Kt_N_m_per_A"] = Num(uke);
  o["Kv_rpm_per_V"] =
      e.value.Ke > 0 ? Num(units::KeToKvRpmPerVolt(e.value.Ke) * uke / e.value.Ke) : json(nullptr);
  return o;
}

json Covariance(const model::ParamCovariance& c) {
  json order = json::array(), rows = json::array();
  for (auto n : model::kParamNames) order.push_back(std::string(n));
  for (int i = 0; i < kNumParams; ++i) {
    json row = json::array();
    for (int k = 0; k < kNumParams; ++k) row.push_back(Num(c(i, k)));
    rows.push_back(row);
  }
  return {{"order", order}, {"matrix", rows}};
}

Status ReadEstimate(const json& j, const char* values_key, const char* cov_key,
                    model::MotorEstimate* e) {
  if (!j.contains(values_key) || !j[values_key].is_object()) {
    return Status::Corruption(fmt::format("rewind plan JSON: no \"{}\" object", values_key));
  }
  const json& v = j[values_key];
  for (int i = 0; i < kNumParams; ++i) {
    const double x = NumOr(v, std::string(model::kParamNames[static_cast<size_t>(i)]).c_str(), 0.0);
    model::Set(&e->value, i, x);
  }
  e->cov.setZero();
  if (j.contains(cov_key) && j[cov_key].is_object()) {
    const json& m = j[cov_key].value("matrix", json::array());
    if (m.is_array() && m.size() == kNumParams) {
      for (int i = 0; i < kNumParams; ++i) {
        const json& row = m[static_cast<size_t>(i)];
        if (!row.is_array() || row.size() != kNumParams) continue;
        for (int k = 0; k < kNumParams; ++k) {
          const json& x = row[static_cast<size_t>(k)];
          e->cov(i, k) = x.is_number() ? x.get<double>() : 0.0;
        }
      }
    }
  }
  return Status::Ok();
}

json WireJson(const model::Wire& w) {
  return {{"name", w.Name()},
          {"awg", w.awg >= 0 ? json(w.awg) : json(nullptr)},
          {"insulation", std::string(model::InsulationName(w.insulation))},
          {"bare_diameter_m", {{"min", w.d_min}, {"nominal", w.d_nom}, {"max", w.d_max}}},
          {"overall_diameter_m", {{"min", w.od_min}, {"nominal", w.od_nom}, {"max", w.od_max}}},
          {"overall_diameter_source", std::string(model::DiameterSourceName(w.od_source))},
          {"ohm_per_m_20C", w.ResistancePerMetre20()}};
}

json WindingJson(const model::Winding& w) {
  return {{"spec", w.Spec()}, {"coils", w.coils}, {"turns", w.turns},
          {"strands", w.strands}, {"wire", WireJson(w.wire)}};
}

Result<model::Winding> ReadWinding(const json& j, const char* key) {
  if (!j.contains(key) || !j[key].is_object()) {
    return Status::Corruption(fmt::format("rewind plan JSON: no \"{}\" winding", key));
  }
  const json& w = j[key];
  const std::string spec = w.value("spec", "");
  std::string insulation = "heavy";
  if (w.contains("wire") && w["wire"].is_object()) insulation = w["wire"].value("insulation", "heavy");
  Result<model::Winding> out = model::ParseWinding(spec + ":" + insulation, w.value("coils", 3));
  if (!out.ok()) return Status::Corruption("rewind plan JSON: " + out.status().message());
  return out;
}

json CharJson(const model::CharacteristicsU& c) {
  json o = json::object();
  const auto v = model::CharacteristicsVector(c.nominal);
  for (int i = 0; i < model::kNumCharacteristics; ++i) {
    o[kCharNames[i]] = {{"value", Num(v(i))}, {"u", Num(c.u(i))}};
  }
  return o;
}

json PointJson(const LoadedPoint& p) {
  return {{"speed_rad_s", Num(p.speed)},       {"speed_rpm", Num(units::RadPerSecToRpm(p.speed))},
          {"current_A", Num(p.current)},       {"torque_N_m", Num(p.torque)},
          {"power_out_W", Num(p.power_out)},   {"power_in_W", Num(p.power_in)},
          {"efficiency", Num(p.efficiency)},   {"terminal_voltage_V", Num(p.v_terminal)}};
}

}  // namespace

json PlanToJson(const Plan& plan) {
  const Prediction& p = plan.prediction;
  const PlanOptions& o = p.options;
  json fill = {{"verdict", FillVerdictName(p.fill.verdict)},
               {"reason", p.fill.reason},
               {"footprint_ratio", Num(p.fill.ratio)},
               {"footprint_ratio_at_max_diameter", Num(p.fill.ratio_max_od)},
               {"old_footprint_m2", Num(p.fill.old_footprint)},
               {"new_footprint_m2", Num(p.fill.new_footprint)},
               {"old_copper_m2", Num(p.fill.old_copper)},
               {"new_copper_m2", Num(p.fill.new_copper)},
               {"old_copper_fill", p.fill.old_copper_fill ? Num(*p.fill.old_copper_fill) : json(nullptr)},
               {"new_copper_fill", p.fill.new_copper_fill ? Num(*p.fill.new_copper_fill) : json(nullptr)},
               {"thresholds", {{"footprint_fits", kFootprintFits},
                               {"footprint_tight", kFootprintTight},
                               {"copper_fill_fits", kCopperFillFits},
                               {"copper_fill_tight", kCopperFillTight}}}};
  json j = {
      {"format", kFormat},
      {"motor", p.baseline.motor},
      {"baseline_source", p.baseline.source},
      {"baseline_fit_id", p.baseline.fit_id ? json(*p.baseline.fit_id) : json(nullptr)},
      {"baseline_r_at_20C", p.baseline.r_at_20C},
      {"baseline", ParamValues(p.baseline.estimate.value)},
      {"baseline_u", ParamUncertainties(p.baseline.estimate)},
      {"baseline_covariance", Covariance(p.baseline.estimate.cov)},
      {"predicted", ParamValues(p.predicted.value)},
      {"predicted_u", ParamUncertainties(p.predicted)},
      {"predicted_covariance", Covariance(p.predicted.cov)},
      {"old", WindingJson(p.old_winding)},
      {"new", WindingJson(p.new_winding)},
      {"ratios", {{"turns", p.turns_ratio}, {"copper_area_per_turn", p.area_ratio},
                  {"mean_turn_length", p.mlt_ratio},
                  {"R", p.predicted.value.R / p.baseline.estimate.value.R},
                  {"Ke", p.predicted.value.Ke / p.baseline.estimate.value.Ke}}},
      {"voltage_V", o.voltage},
      {"characteristics", {{"baseline", CharJson(p.baseline_char)},
                           {"predicted", CharJson(p.predicted_char)}}},
      {"fill", fill},
      {"geometry", {{"stack_length_m", Num(o.dims.stack_length)},
                    {"tooth_width_m", Num(o.dims.tooth_width)},
                    {"build_depth_m", Num(o.dims.build_depth)},
                    {"slot_area_m2", Num(o.dims.slot_area)},
                    {"R_from_geometry_old_ohm", p.r_geometry_old ? Num(*p.r_geometry_old) : json(nullptr)},
                    {"R_from_geometry_new_ohm", p.r_geometry_new ? Num(*p.r_geometry_new) : json(nullptr)}}},
      {"options", {{"brush_fraction", o.brush_fraction}, {"turn_count_u", o.turn_count_u},
                   {"r_model_u", o.r_model_u}, {"ke_model_u", o.ke_model_u},
                   {"build_fraction_of_mlt", o.build_fraction_of_mlt}}},
      {"notes", p.notes},
      {"safety", SafetyNote()}};
  if (plan.load) {
    const FanLoadEstimate& l = *plan.load;
    j["load"] = {{"run_id", plan.load_run_id ? json(*plan.load_run_id) : json(nullptr)},
                 {"fan_c_N_m_s2_per_rad2", Num(l.c)}, {"fan_c_u", Num(l.c_u)},
                 {"fan_c_u_noise", Num(l.c_u_noise)},
                 {"fan_c_from_current", Num(l.c_from_current)},
                 {"speed_rad_s", Num(l.speed)}, {"current_A", Num(l.current)},
                 {"terminal_voltage_V", Num(l.v_terminal)}, {"source_voltage_V", Num(l.v_source)},
                 {"source_resistance_ohm", Num(l.r_source)},
                 {"window_s", {Num(l.t_from), Num(l.t_to)}}};
  } else {
    j["load"] = nullptr;
  }
  if (plan.loaded) {
    j["loaded"] = {{"baseline", PointJson(plan.loaded->baseline)},
                   {"predicted", PointJson(plan.loaded->predicted)},
                   {"predicted_u", {{"speed_rad_s", Num(plan.loaded->speed_u)},
                                    {"current_A", Num(plan.loaded->current_u)},
                                    {"power_out_W", Num(plan.loaded->power_u)}}}};
  } else {
    j["loaded"] = nullptr;
  }
  if (plan.id > 0) j["plan_id"] = plan.id;
  return j;
}

Result<Plan> PlanFromJson(const json& j) {
  if (!j.is_object() || j.value("format", "") != kFormat) {
    return Status::Corruption(fmt::format("rewind plan JSON: expected format \"{}\"", kFormat));
  }
  Baseline b;
  RB_RETURN_IF_ERROR(ReadEstimate(j, "baseline", "baseline_covariance", &b.estimate));
  b.source = j.value("baseline_source", "");
  b.motor = j.value("motor", "");
  b.r_at_20C = j.value("baseline_r_at_20C", false);
  if (j.contains("baseline_fit_id") && j["baseline_fit_id"].is_number_integer()) {
    b.fit_id = j["baseline_fit_id"].get<std::int64_t>();
  }
  Result<model::Winding> old_w = ReadWinding(j, "old");
  if (!old_w.ok()) return old_w.status();
  Result<model::Winding> new_w = ReadWinding(j, "new");
  if (!new_w.ok()) return new_w.status();
  PlanOptions o;
  o.voltage = NumOr(j, "voltage_V");
  if (j.contains("options")) {
    const json& op = j["options"];
    o.brush_fraction = NumOr(op, "brush_fraction", o.brush_fraction);
    o.turn_count_u = NumOr(op, "turn_count_u", o.turn_count_u);
    o.r_model_u = NumOr(op, "r_model_u", o.r_model_u);
    o.ke_model_u = NumOr(op, "ke_model_u", o.ke_model_u);
    o.build_fraction_of_mlt = NumOr(op, "build_fraction_of_mlt", o.build_fraction_of_mlt);
  }
  if (j.contains("geometry")) {
    const json& g = j["geometry"];
    o.dims.stack_length = NumOr(g, "stack_length_m");
    o.dims.tooth_width = NumOr(g, "tooth_width_m");
    o.dims.build_depth = NumOr(g, "build_depth_m");
    o.dims.slot_area = NumOr(g, "slot_area_m2");
  }
  Result<Prediction> pred = PredictRewind(b, *old_w, *new_w, o);
  if (!pred.ok()) return Status::Corruption("rewind plan JSON: " + pred.status().message());
  Plan plan;
  plan.prediction = std::move(*pred);
  // The stored prediction is what was promised: use it, not a recomputation.
  RB_RETURN_IF_ERROR(ReadEstimate(j, "predicted", "predicted_covariance", &plan.prediction.predicted));
  plan.prediction.predicted_char =
      model::ComputeCharacteristicsU(plan.prediction.predicted, o.voltage);
  if (j.contains("load") && j["load"].is_object()) {
    const json& l = j["load"];
    FanLoadEstimate f;
    f.c = NumOr(l, "fan_c_N_m_s2_per_rad2");
    f.c_u = NumOr(l, "fan_c_u", 0.0);
    f.c_u_noise = NumOr(l, "fan_c_u_noise", 0.0);
    f.c_from_current = NumOr(l, "fan_c_from_current");
    f.speed = NumOr(l, "speed_rad_s");
    f.current = NumOr(l, "current_A");
    f.v_terminal = NumOr(l, "terminal_voltage_V");
    f.v_source = NumOr(l, "source_voltage_V");
    f.r_source = NumOr(l, "source_resistance_ohm", 0.0);
    if (l.contains("run_id") && l["run_id"].is_number_integer()) {
      plan.load_run_id = l["run_id"].get<std::int64_t>();
    }
    plan.load = f;
    plan.loaded = PredictLoaded(plan.prediction, f);
  }
  plan.id = j.value("plan_id", std::int64_t{0});
  return plan;
}

Result<std::int64_t> StorePlan(storage::Database& db, const Plan& plan,
                               std::optional<std::int64_t> motor_id) {
  storage::PlanRecord rec;
  rec.motor_id = motor_id;
  rec.baseline_fit_id = plan.prediction.baseline.fit_id;
  rec.created_utc = UtcNowIso();
  Plan copy = plan;
  copy.id = 0;
  rec.plan_json = PlanToJson(copy).dump();
  return db.AddPlan(rec);
}

Result<Plan> LoadPlan(storage::Database& db, std::int64_t plan_id) {
  Result<storage::PlanRecord> rec = db.GetPlan(plan_id);
  if (!rec.ok()) return rec.status();
  json j = json::parse(rec->plan_json, nullptr, /*allow_exceptions=*/false);
  if (j.is_discarded()) {
    return Status::Corruption(fmt::format("{}: plan {}: not valid JSON", db.path(), plan_id));
  }
  Result<Plan> p = PlanFromJson(j);
  if (!p.ok()) return p.status().WithPrefix(fmt::format("{}: plan {}", db.path(), plan_id));
  p->id = plan_id;
  return p;
}

PlanCurves CurvesForReport(const Plan& plan, int n) {
  PlanCurves c;
  c.voltage = plan.prediction.options.voltage;
  c.baseline = plan.prediction.baseline.estimate;
  c.predicted = plan.prediction.predicted;
  c.baseline_curves = model::CharacteristicCurvesU(c.baseline, c.voltage, n);
  c.predicted_curves = model::CharacteristicCurvesU(c.predicted, c.voltage, n);
  return c;
}

const char* SafetyNote() {
  return "Safety: stripping enamel and soldering give off fumes — work with fume extraction "
         "or good ventilation and keep your head out of the plume; solderable polyurethane "
         "enamel can release isocyanates when overheated, so do not burn it off; chemical "
         "strippers have their own hazards (read the safety data sheets). Test a rewound "
         "motor clamped, with a current-limited supply and short locked-rotor pulses. This "
         "is general guidance: follow local codes, workplace rules and the materials' "
         "safety data sheets.";
}

}  // namespace rb::rewind
