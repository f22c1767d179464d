// FitSummary: model names and the JSON form that other tools rely on.
#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/fit.h"
#include "model/units.h"

using namespace rb;
using namespace rb::fit;

TEST_CASE("model names are built from what they add, and parse back") {
  for (const char* n : {"basic", "basic+brush", "basic+inductance", "basic+brush+inductance",
                        "basic+brush+heating"}) {
    auto m = ModelSpec::Parse(n);
    REQUIRE(m.ok());
    CHECK(m->Name() == n);
  }
  CHECK_FALSE(ModelSpec::Parse("full").ok());
  CHECK_FALSE(ModelSpec::Parse("basic+inductance+brush").ok());  // fixed order
}

TEST_CASE("JSON carries every parameter with value and stderr, Kt = Ke, Kv in rpm/V, and "
          "round-trips") {
  FitSummary s;
  s.motor = "M-7";
  s.model.brush_drop = true;
  const double vals[] = {1.8, 0, 6.2e-3, 1.6e-6, 4e-4, 2e-7, 0.15};
  for (int i = 0; i < model::kNumParams; ++i) {
    s.params[i] = {i != model::kL, vals[i], 0.01 * vals[i], 0.02 * vals[i]};
    s.covariance(i, i) = std::pow(0.02 * vals[i], 2);
    s.covariance_stat(i, i) = std::pow(0.01 * vals[i], 2);
  }
  s.covariance_stat(model::kJ, model::kTc) = s.covariance_stat(model::kTc, model::kJ) =
      0.5 * 0.01 * vals[model::kJ] * 0.01 * vals[model::kTc];
  s.diagnostics.push_back({Diagnostic::Severity::kWarning, "L_H", "not identifiable", "sample faster"});
  s.runs.push_back({3, model::RunKind::kSpinUp, 6.0, {{"t_offset_s", 1e-4}}, {{"speed", 100, 0.5, 0.4, 2}}});
  const nlohmann::json j = ToJson(s);
  CHECK(j["motor"] == "M-7");
  for (const char* n : {"R_ohm", "Ke_V_s_per_rad", "Kt_N_m_per_A", "Kv_rpm_per_V", "J_kg_m2",
                        "Tc_N_m", "b_N_m_s_per_rad", "L_H", "Vb_V"}) {
    CAPTURE(n);
    CHECK(j["parameters"].contains(n));
    CHECK(j["parameters"][n].contains("value"));
    CHECK(j["parameters"][n].contains("stderr"));
  }
  CHECK(j["parameters"]["Kt_N_m_per_A"]["value"] == j["parameters"]["Ke_V_s_per_rad"]["value"]);
  CHECK(j["parameters"]["Kv_rpm_per_V"]["value"].get<double>() ==
        doctest::Approx(units::KeToKvRpmPerVolt(6.2e-3)));
  CHECK(j["parameters"]["L_H"]["stderr"].is_null());  // fixed parameters carry no error
  auto back = FitSummaryFromJsonText(j.dump());
  REQUIRE(back.ok());
  CHECK(back->model == s.model);
  CHECK(back->params[model::kTc].value == 4e-4);
  CHECK(back->params[model::kTc].stderr_stat == doctest::Approx(4e-6));
  CHECK(back->covariance_stat(model::kJ, model::kTc) == s.covariance_stat(model::kJ, model::kTc));
  CHECK(back->Correlation()(model::kJ, model::kTc) == doctest::Approx(0.5));
  CHECK(back->runs.at(0).channels.at(0).outliers == 2);
  CHECK(back->diagnostics.at(0).suggestion == "sample faster");
  CHECK_FALSE(FitSummaryFromJsonText("{}").ok());
  CHECK_FALSE(FitSummaryFromJsonText("not json").ok());
}
