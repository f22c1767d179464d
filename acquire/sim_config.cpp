#include "acquire/sim_config.h"

#include <cmath>
#include <functional>
#include <map>

#include "acquire/toml_util.h"
#include "model/demo.h"
#include "model/units.h"

namespace rb::acquire {
namespace {

using Setter = std::function<void(SimRigOptions*, double)>;

/// Motor-file keys by table, each with its conversion to SI.
const std::map<std::string, std::map<std::string, Setter>>& Keys() {
  static const std::map<std::string, std::map<std::string, Setter>> k = {
      {"motor",
       {{"resistance_ohm", [](SimRigOptions* r, double v) { r->bench.motor.R = v; }},
        {"inductance_mH", [](SimRigOptions* r, double v) { r->bench.motor.L = units::MilliHenryToHenry(v); }},
        {"kv_rpm_per_V", [](SimRigOptions* r, double v) { r->bench.motor.Ke = units::KvRpmPerVoltToKe(v); }},
        {"ke_V_s_per_rad", [](SimRigOptions* r, double v) { r->bench.motor.Ke = v; }},
        {"inertia_g_cm2", [](SimRigOptions* r, double v) { r->bench.motor.J = units::GCm2ToKgM2(v); }},
        {"friction_mN_m", [](SimRigOptions* r, double v) { r->bench.motor.Tc = units::MilliNmToNm(v); }},
        {"viscous_N_m_s_per_rad", [](SimRigOptions* r, double v) { r->bench.motor.b = v; }},
        {"brush_drop_V", [](SimRigOptions* r, double v) { r->bench.motor.Vb = v; }},
        {"segments", [](SimRigOptions* r, double v) { r->bench.commutator.segments = static_cast<int>(v); }},
        {"brush_fraction", [](SimRigOptions* r, double v) { r->bench.commutator.brush_fraction = v; }},
        {"heat_capacity_J_per_K", [](SimRigOptions* r, double v) { r->bench.thermal.heat_capacity_J_per_K = v; }},
        {"load_mN_m", [](SimRigOptions* r, double v) { r->bench.load.constant_N_m = units::MilliNmToNm(v); }}}},
      {"bench",
       {{"supply_V", [](SimRigOptions* r, double v) { r->supply_volts = v; }},
        {"supply_resistance_ohm", [](SimRigOptions* r, double v) { r->bench.supply.internal_resistance_ohm = v; }},
        {"seed", [](SimRigOptions* r, double v) { r->bench.seed = static_cast<std::uint64_t>(v); }},
        {"ambient_C", [](SimRigOptions* r, double v) { r->bench.thermal.start_temperature_C = v; }}}},
      {"tach",
       {{"marks_per_rev", [](SimRigOptions* r, double v) { r->bench.instruments.tach.marks_per_rev = static_cast<int>(v); }},
        {"miss_probability", [](SimRigOptions* r, double v) { r->bench.instruments.tach.miss_probability = v; }},
        {"resolution_us", [](SimRigOptions* r, double v) { r->bench.instruments.tach.timer_resolution_s = v * 1e-6; }}}},
      {"adc",
       {{"rate_Hz", [](SimRigOptions* r, double v) { r->bench.instruments.adc_rate_hz = v; }},
        {"current_lsb_A", [](SimRigOptions* r, double v) { r->bench.instruments.current.lsb = v; }},
        {"current_gain_error", [](SimRigOptions* r, double v) { r->bench.instruments.current.gain_error = v; }},
        {"current_offset_A", [](SimRigOptions* r, double v) { r->bench.instruments.current.offset = v; }},
        {"current_noise_A", [](SimRigOptions* r, double v) { r->bench.instruments.current.noise_sd = v; }},
        {"current_full_scale_A", [](SimRigOptions* r, double v) { r->bench.instruments.current.full_scale = v; }},
        {"voltage_lsb_V", [](SimRigOptions* r, double v) { r->bench.instruments.voltage.lsb = v; }},
        {"voltage_gain_error", [](SimRigOptions* r, double v) { r->bench.instruments.voltage.gain_error = v; }},
        {"voltage_offset_V", [](SimRigOptions* r, double v) { r->bench.instruments.voltage.offset = v; }},
        {"voltage_noise_V", [](SimRigOptions* r, double v) { r->bench.instruments.voltage.noise_sd = v; }},
        {"voltage_full_scale_V", [](SimRigOptions* r, double v) { r->bench.instruments.voltage.full_scale = v; }}}},
      {"rig",
       {{"serial", [](SimRigOptions* r, double v) { r->serial = static_cast<std::uint32_t>(v); }},
        {"current_limit_A", [](SimRigOptions* r, double v) { r->current_limit_A = v; }},
        {"locked_limit_ms", [](SimRigOptions* r, double v) { r->locked_limit_ms = static_cast<std::uint16_t>(v); }},
        {"watchdog_ms", [](SimRigOptions* r, double v) { r->watchdog_ms = static_cast<std::uint16_t>(v); }},
        {"frame_ms", [](SimRigOptions* r, double v) { r->frame_period_s = v * 1e-3; }}}},
  };
  return k;
}

Status ApplyFile(const std::string& path, SimRigOptions* rig) {
  Result<TomlDoc> doc = TomlDoc::Parse(path);
  if (!doc.ok()) return doc.status();
  std::set<std::string> tables;
  for (const auto& [name, keys] : Keys()) tables.insert(name);
  RB_RETURN_IF_ERROR(CheckKeys(*doc, doc->root(), tables, ""));
  for (const auto& [name, keys] : Keys()) {
    Result<const toml::table*> t = GetTable(*doc, doc->root(), name);
    if (!t.ok()) return t.status();
    if (!*t) continue;
    std::set<std::string> allowed;
    for (const auto& [k, setter] : keys) allowed.insert(k);
    if (name == "rig") allowed.insert("name");
    RB_RETURN_IF_ERROR(CheckKeys(*doc, **t, allowed, name));
    for (const auto& [k, setter] : keys) {
      Result<std::optional<double>> v = GetNumber(*doc, **t, k);
      if (!v.ok()) return v.status();
      if (*v) {
        if (!std::isfinite(**v)) return Status::InvalidArgument(Where(*doc, **t, k) + ": " + k + " is not finite");
        setter(rig, **v);
      }
    }
    if (name == "rig") {
      Result<std::optional<std::string>> n = GetString(*doc, **t, "name");
      if (!n.ok()) return n.status();
      if (*n) rig->name = **n;
    }
  }
  return Status::Ok();
}

}  // namespace

Result<SimRigOptions> BuildSimRig(const std::string& motor_file, const SimOverrides& o) {
  SimRigOptions rig;
  rig.bench = model::DemoBench(1);
  if (!motor_file.empty()) RB_RETURN_IF_ERROR(ApplyFile(motor_file, &rig));
  model::BenchModel& b = rig.bench;
  if (o.seed) b.seed = *o.seed;
  if (o.resistance_ohm) b.motor.R = *o.resistance_ohm;
  if (o.kv_rpm_per_V) b.motor.Ke = units::KvRpmPerVoltToKe(*o.kv_rpm_per_V);
  if (o.inertia_g_cm2) b.motor.J = units::GCm2ToKgM2(*o.inertia_g_cm2);
  if (o.friction_mN_m) b.motor.Tc = units::MilliNmToNm(*o.friction_mN_m);
  if (o.viscous_N_m_s_per_rad) b.motor.b = *o.viscous_N_m_s_per_rad;
  if (o.inductance_mH) b.motor.L = units::MilliHenryToHenry(*o.inductance_mH);
  if (o.brush_drop_V) b.motor.Vb = *o.brush_drop_V;
  if (o.segments) b.commutator.segments = *o.segments;
  if (o.current_gain_error) b.instruments.current.gain_error = *o.current_gain_error;
  if (o.current_offset_A) b.instruments.current.offset = *o.current_offset_A;
  if (o.voltage_gain_error) b.instruments.voltage.gain_error = *o.voltage_gain_error;
  if (o.current_noise_A) b.instruments.current.noise_sd = *o.current_noise_A;
  if (o.tach_miss_probability) b.instruments.tach.miss_probability = *o.tach_miss_probability;
  if (o.marks_per_rev) b.instruments.tach.marks_per_rev = *o.marks_per_rev;
  if (o.adc_rate_Hz) b.instruments.adc_rate_hz = *o.adc_rate_Hz;
  if (o.supply_V) rig.supply_volts = *o.supply_V;
  if (o.supply_resistance_ohm) b.supply.internal_resistance_ohm = *o.supply_resistance_ohm;
  if (o.current_limit_A) rig.current_limit_A = *o.current_limit_A;
  if (o.resistor_ohm) {
    // A resistor: no back-EMF worth the name, no brushes, no commutator; the shaft never
    // turns (it is held from the start).
    b.motor.R = *o.resistor_ohm;
    b.motor.L = 0;
    b.motor.Vb = 0;
    b.commutator.segments = 0;
    rig.shaft_held = true;
  }
  RB_RETURN_IF_ERROR(ValidateSimRig(rig));
  return rig;
}

Status ValidateSimRig(const SimRigOptions& rig) {
  const model::BenchModel& b = rig.bench;
  const model::MotorParams& m = b.motor;
  if (!(m.R > 0 && m.Ke > 0 && m.J > 0 && m.Tc >= 0 && m.b >= 0 && m.L >= 0 && m.Vb >= 0)) {
    return Status::InvalidArgument("motor: R, Kv, inertia must be > 0 and L, friction, viscous, "
                                   "brush drop >= 0");
  }
  const model::InstrumentModel& ins = b.instruments;
  if (!(ins.adc_rate_hz >= 10 && ins.adc_rate_hz <= 200000)) {
    return Status::InvalidArgument("ADC rate " + std::to_string(ins.adc_rate_hz) +
                                   " Hz; expected 10 to 200000 Hz");
  }
  if (ins.tach.marks_per_rev < 1 || ins.tach.marks_per_rev > 255) {
    return Status::InvalidArgument("marks per revolution must be 1 to 255");
  }
  if (!(ins.current.lsb > 0 && ins.voltage.lsb > 0) || ins.current.full_scale / ins.current.lsb > 32767 ||
      ins.voltage.full_scale / ins.voltage.lsb > 32767) {
    return Status::InvalidArgument("ADC full scale / LSB must fit 16-bit counts (<= 32767)");
  }
  if (!(rig.supply_volts > 0 && rig.supply_volts <= ins.voltage.full_scale)) {
    return Status::InvalidArgument("supply " + std::to_string(rig.supply_volts) +
                                   " V; expected > 0 and within the voltage channel's full scale");
  }
  if (!(rig.frame_period_s >= 1e-3 && rig.frame_period_s <= 0.02)) {
    return Status::InvalidArgument("frame period must be 1 to 20 ms (protocol §6)");
  }
  return Status::Ok();
}

}  // namespace rb::acquire
