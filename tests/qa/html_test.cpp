// The HTML forms of a batch and a plan (built when the report module is present).
#include <doctest/doctest.h>

#if ROTORBENCH_QA_HTML
#include <algorithm>
#include <cmath>
#include <numbers>
#include <string>
#include <vector>

#include "qa/html.h"

using namespace rb;
using namespace rb::qa;

namespace {

int Count(const std::string& s, const std::string& what) {
  int n = 0;
  for (size_t at = s.find(what); at != std::string::npos; at = s.find(what, at + 1)) ++n;
  return n;
}

}  // namespace

TEST_CASE(
    "batch HTML: one page, motors and statistics tables, a histogram per quantity with "
    "its limits drawn") {
  Limit kv;
  kv.quantity = SpecQuantity::kKv;
  kv.unit = "rpm/V";
  kv.unit_scale = std::numbers::pi / 30.0;
  kv.lower = 1463.0 * kv.unit_scale;
  kv.upper = 1617.0 * kv.unit_scale;
  Limit j = kv;
  j.quantity = SpecQuantity::kInertia;
  j.unit = "g.cm2";
  j.unit_scale = 1e-7;
  j.lower.reset();
  j.upper = 19.2e-7;
  Spec spec;
  spec.name = "html <test>";
  spec.limits = {kv, j};
  std::vector<MotorCheck> checks;
  const std::vector<double> kvs = {1540, 1552, 1528, 1546, 1534, 1543, 1537, 1550, 1530, 1780};
  for (size_t i = 0; i < kvs.size(); ++i) {
    fit::FitSummary f;
    f.motor = "M-" + std::to_string(i + 1);
    const double ke = 60.0 / (2 * std::numbers::pi * kvs[i]);
    f.params[model::kKe] = {true, ke, 0.002 * ke, 0.002 * ke};
    f.covariance(model::kKe, model::kKe) = std::pow(0.002 * ke, 2);
    f.params[model::kJ] = {true, 1.6e-6, 1e-8, 1e-8};
    f.covariance(model::kJ, model::kJ) = 1e-16;
    checks.push_back(CheckFit(f, spec, {}));
  }
  const BatchSummary b = SummarizeBatch("lot-9", spec, std::move(checks), {}, {});
  const std::string html = BatchHtml(b);
  CHECK(html.find("<!DOCTYPE html>") == 0);
  CHECK(html.find("html &lt;test&gt;") != std::string::npos);  // user text is escaped
  CHECK(Count(html, "<svg") == 2);                             // one histogram per quantity
  CHECK(html.find("LSL 1463") != std::string::npos);
  CHECK(html.find("USL 1617") != std::string::npos);
  CHECK(html.find("USL 19.2") != std::string::npos);
  CHECK(html.find("FAIL") != std::string::npos);
  CHECK(html.find("M-10") != std::string::npos);
  CHECK(html.find("<script") == std::string::npos);  // self-contained, no scripts
}

TEST_CASE("plan HTML: the plan, both risks and the OC curve") {
  PlanOptions o;
  o.lot = 1000;
  o.aql = 0.01;
  o.ltpd = 0.05;
  const Result<SamplingPlan> p = FindPlan(o);
  REQUIRE(p.ok());
  const std::string html = PlanHtml(*p);
  CHECK(html.find("<!DOCTYPE html>") == 0);
  CHECK(html.find("n = " + std::to_string(p->n)) != std::string::npos);
  CHECK(Count(html, "<svg") == 1);
  CHECK(html.find("hypergeometric") != std::string::npos);
}
#endif
