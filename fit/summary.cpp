// FitSummary: model names, JSON form, storage of fits.
#include <cmath>
#include <nlohmann/json.hpp>

#include "base/time_util.h"
#include "base/version.h"
#include "fit/fit.h"
#include "model/units.h"
#include "storage/storage.h"

namespace rb::fit {
namespace {

using nlohmann::json;
using model::kNumParams;

const char* SeverityName(Diagnostic::Severity s) {
  switch (s) {
    case Diagnostic::Severity::kInfo: return "info";
    case Diagnostic::Severity::kWarning: return "warning";
    case Diagnostic::Severity::kError: return "error";
  }
  return "info";
}

Diagnostic::Severity SeverityFromName(const std::string& s) {
  if (s == "warning") return Diagnostic::Severity::kWarning;
  if (s == "error") return Diagnostic::Severity::kError;
  return Diagnostic::Severity::kInfo;
}

json Num(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
double NumOr(const json& j, double fallback = NAN) {
  return j.is_number() ? j.get<double>() : fallback;
}

json MatrixJson(const model::ParamCovariance& m) {
  json rows = json::array();
  for (int i = 0; i < kNumParams; ++i) {
    json row = json::array();
    for (int k = 0; k < kNumParams; ++k) row.push_back(Num(m(i, k)));
    rows.push_back(row);
  }
  return rows;
}

Status MatrixFromJson(const json& j, model::ParamCovariance* m) {
  if (!j.is_array() || j.size() != kNumParams) {
    return Status::Corruption("fit JSON: covariance is not a 7×7 matrix");
  }
  for (int i = 0; i < kNumParams; ++i) {
    const json& row = j[static_cast<size_t>(i)];
    if (!row.is_array() || row.size() != kNumParams) {
      return Status::Corruption("fit JSON: covariance is not a 7×7 matrix");
    }
    for (int k = 0; k < kNumParams; ++k) (*m)(i, k) = NumOr(row[static_cast<size_t>(k)], 0.0);
  }
  return Status::Ok();
}

}  // namespace

std::string ModelSpec::Name() const {
  std::string s = "basic";
  if (brush_drop) s += "+brush";
  if (inductance) s += "+inductance";
  if (heating) s += "+heating";
  return s;
}

Result<ModelSpec> ModelSpec::Parse(std::string_view name) {
  ModelSpec m;
  std::string_view rest = name;
  auto take = [&rest](std::string_view word) {
    if (rest.substr(0, word.size()) == word) {
      rest.remove_prefix(word.size());
      return true;
    }
    return false;
  };
  bool ok = take("basic");
  if (ok && take("+brush")) m.brush_drop = true;
  if (ok && take("+inductance")) m.inductance = true;
  if (ok && take("+heating")) m.heating = true;
  if (!ok || !rest.empty()) {
    return Status::InvalidArgument(
        "--model " + std::string(name) +
        ": unknown model; expected basic, optionally followed by +brush, +inductance, "
        "+heating in that order (e.g. basic+brush+inductance)");
  }
  return m;
}

model::MotorParams FitSummary::Params() const {
  model::MotorParams p;
  for (int i = 0; i < kNumParams; ++i) model::Set(&p, i, params[static_cast<size_t>(i)].value);
  return p;
}

model::MotorEstimate FitSummary::Estimate() const { return {Params(), covariance}; }

model::ParamCovariance FitSummary::Correlation() const {
  model::ParamCovariance c = model::ParamCovariance::Zero();
  for (int i = 0; i < kNumParams; ++i) {
    for (int k = 0; k < kNumParams; ++k) {
      const double d = std::sqrt(covariance_stat(i, i) * covariance_stat(k, k));
      c(i, k) = d > 0 ? covariance_stat(i, k) / d : (i == k ? 1.0 : 0.0);
    }
  }
  return c;
}

json ToJson(const FitSummary& s) {
  json params = json::object();
  for (int i = 0; i < kNumParams; ++i) {
    const ParamResult& p = s.params[static_cast<size_t>(i)];
    params[std::string(model::kParamNames[static_cast<size_t>(i)])] = {
        {"value", Num(p.value)},
        {"stderr", p.fitted ? Num(p.stderr_stat) : json(nullptr)},
        {"u_combined", p.fitted ? Num(p.u_combined) : json(nullptr)},
        {"fitted", p.fitted},
        {"identified", p.identified}};
  }
  json extra = json::object();
  for (const auto& [name, p] : s.extra) {
    extra[name] = {{"value", Num(p.value)},
                   {"stderr", p.identified ? Num(p.stderr_stat) : json(nullptr)},
                   {"u_combined", p.identified ? Num(p.u_combined) : json(nullptr)},
                   {"fitted", p.fitted},
                   {"identified", p.identified}};
  }
  // Derived views: Kt = Ke in SI; Kv = 60/(2π·Ke) in rpm/V (relative errors carry over).
  const ParamResult& ke = s.params[model::kKe];
  params["Kt_N_m_per_A"] = params["Ke_V_s_per_rad"];
  const double kv = ke.value > 0 ? units::KeToKvRpmPerVolt(ke.value) : NAN;
  params["Kv_rpm_per_V"] = {
      {"value", Num(kv)},
      {"stderr", ke.fitted ? Num(kv * ke.stderr_stat / ke.value) : json(nullptr)},
      {"u_combined", ke.fitted ? Num(kv * ke.u_combined / ke.value) : json(nullptr)},
      {"fitted", ke.fitted},
      {"identified", ke.identified}};

  json order = json::array();
  for (auto n : model::kParamNames) order.push_back(std::string(n));
  json budget = json::array();
  for (const BudgetLine& b : s.budget) {
    budget.push_back({{"param", std::string(model::kParamNames[static_cast<size_t>(b.param)])},
                      {"source", b.source},
                      {"u", Num(b.u)}});
  }
  json diags = json::array();
  for (const Diagnostic& d : s.diagnostics) {
    diags.push_back({{"severity", SeverityName(d.severity)},
                     {"param", d.param},
                     {"message", d.message},
                     {"suggestion", d.suggestion}});
  }
  json runs = json::array();
  for (const RunFit& r : s.runs) {
    json nuisance = json::object();
    for (const auto& [k, v] : r.nuisance) nuisance[k] = Num(v);
    json channels = json::array();
    for (const ChannelFit& c : r.channels) {
      channels.push_back({{"channel", c.channel}, {"n", c.n}, {"rms", Num(c.rms)},
                          {"sigma", Num(c.sigma)}, {"outliers", c.outliers}});
    }
    runs.push_back({{"run_id", r.run_id},
                    {"kind", std::string(model::RunKindName(r.kind))},
                    {"nominal_voltage_V", Num(r.nominal_voltage)},
                    {"nuisance", nuisance},
                    {"channels", channels}});
  }
  json r20 = nullptr;
  if (s.R20) {
    r20 = {{"value", Num(*s.R20)},
           {"u", Num(s.R20_u.value_or(NAN))},
           {"temperature_C", Num(s.temperature_C.value_or(NAN))}};
  }
  return {{"motor", s.motor},
          {"model", s.model.Name()},
          {"software_version", s.software_version},
          {"parameters", params},
          {"extra_parameters", extra},
          {"covariance", {{"order", order},
                          {"combined", MatrixJson(s.covariance)},
                          {"statistical", MatrixJson(s.covariance_stat)}}},
          {"budget", budget},
          {"R20_ohm", r20},
          {"diagnostics", diags},
          {"runs", runs},
          {"solver", {{"iterations", s.iterations},
                      {"final_cost", Num(s.final_cost)},
                      {"termination", s.termination},
                      {"seconds", Num(s.solve_seconds)}}}};
}

Result<FitSummary> FitSummaryFromJson(const json& j) {
  if (!j.is_object() || !j.contains("parameters") || !j["parameters"].is_object()) {
    return Status::Corruption("fit JSON: no \"parameters\" object");
  }
  FitSummary s;
  s.motor = j.value("motor", "");
  Result<ModelSpec> m = ModelSpec::Parse(j.value("model", "basic"));
  if (!m.ok()) return Status::Corruption("fit JSON: " + m.status().message());
  s.model = *m;
  s.software_version = j.value("software_version", "");
  const json& params = j["parameters"];
  for (int i = 0; i < kNumParams; ++i) {
    const std::string name(model::kParamNames[static_cast<size_t>(i)]);
    if (!params.contains(name)) return Status::Corruption("fit JSON: no parameter " + name);
    const json& p = params[name];
    ParamResult& r = s.params[static_cast<size_t>(i)];
    r.value = NumOr(p.value("value", json(nullptr)));
    r.stderr_stat = NumOr(p.value("stderr", json(nullptr)), 0.0);
    r.u_combined = NumOr(p.value("u_combined", json(nullptr)), 0.0);
    r.fitted = p.value("fitted", false);
    // Older fits lack "identified": a parameter without a value was not determined.
    r.identified = p.value("identified", std::isfinite(r.value));
  }
  // A named copy: items() of the temporary value() returns would dangle in the loop.
  const json extra_params = j.value("extra_parameters", json::object());
  for (const auto& [name, p] : extra_params.items()) {
    ParamResult r;
    r.value = NumOr(p.value("value", json(nullptr)));
    r.stderr_stat = NumOr(p.value("stderr", json(nullptr)), 0.0);
    r.u_combined = NumOr(p.value("u_combined", json(nullptr)), 0.0);
    r.fitted = p.value("fitted", false);
    r.identified = p.value("identified", std::isfinite(r.value));
    s.extra.emplace_back(name, r);
  }
  if (j.contains("covariance")) {
    RB_RETURN_IF_ERROR(MatrixFromJson(j["covariance"].value("combined", json()), &s.covariance));
    RB_RETURN_IF_ERROR(
        MatrixFromJson(j["covariance"].value("statistical", json()), &s.covariance_stat));
  }
  for (const json& b : j.value("budget", json::array())) {
    auto idx = model::ParamIndexFromName(b.value("param", ""));
    if (idx) s.budget.push_back({*idx, b.value("source", ""), NumOr(b.value("u", json()))});
  }
  if (j.contains("R20_ohm") && j["R20_ohm"].is_object()) {
    s.R20 = NumOr(j["R20_ohm"].value("value", json()));
    s.R20_u = NumOr(j["R20_ohm"].value("u", json()));
    s.temperature_C = NumOr(j["R20_ohm"].value("temperature_C", json()));
  }
  for (const json& d : j.value("diagnostics", json::array())) {
    s.diagnostics.push_back({SeverityFromName(d.value("severity", "info")), d.value("param", ""),
                             d.value("message", ""), d.value("suggestion", "")});
  }
  for (const json& r : j.value("runs", json::array())) {
    RunFit rf;
    rf.run_id = r.value("run_id", std::int64_t{0});
    rf.kind = model::RunKindFromName(r.value("kind", "")).value_or(model::RunKind::kFree);
    rf.nominal_voltage = NumOr(r.value("nominal_voltage_V", json()));
    const json nuisance = r.value("nuisance", json::object());
    for (const auto& [k, v] : nuisance.items()) {
      rf.nuisance.emplace_back(k, NumOr(v));
    }
    for (const json& c : r.value("channels", json::array())) {
      rf.channels.push_back({c.value("channel", ""), c.value("n", std::size_t{0}),
                             NumOr(c.value("rms", json())), NumOr(c.value("sigma", json())),
                             c.value("outliers", std::size_t{0})});
    }
    s.runs.push_back(std::move(rf));
  }
  if (j.contains("solver")) {
    const json& so = j["solver"];
    s.iterations = so.value("iterations", -1);
    s.final_cost = NumOr(so.value("final_cost", json()));
    s.termination = so.value("termination", "");
    s.solve_seconds = NumOr(so.value("seconds", json()), 0.0);
  }
  return s;
}

Result<FitSummary> FitSummaryFromJsonText(std::string_view text) {
  json j = json::parse(text, nullptr, /*allow_exceptions=*/false);
  if (j.is_discarded()) return Status::Corruption("fit JSON: not valid JSON");
  return FitSummaryFromJson(j);
}

Result<std::int64_t> StoreFit(storage::Database& db, const FitSummary& s) {
  Result<storage::Motor> m = db.FindMotor(s.motor);
  if (!m.ok()) return m.status();
  storage::FitRecord rec;
  rec.motor_id = m->id;
  rec.created_utc = UtcNowIso();
  rec.model = s.model.Name();
  rec.software_version = s.software_version.empty() ? kVersion : s.software_version;
  for (const RunFit& r : s.runs) rec.run_ids.push_back(r.run_id);
  rec.result_json = ToJson(s).dump();
  return db.AddFit(rec);
}

Result<FitSummary> LoadFit(storage::Database& db, std::int64_t fit_id) {
  Result<storage::FitRecord> rec = db.GetFit(fit_id);
  if (!rec.ok()) return rec.status();
  Result<FitSummary> s = FitSummaryFromJsonText(rec->result_json);
  if (!s.ok()) return s.status().WithPrefix(db.path() + ": fit " + std::to_string(fit_id));
  return s;
}

}  // namespace rb::fit
