// The motor fit against simulated truth: the bench simulator of model/simulate.h with the
// invented demo motor (model/demo.h) and realistic instruments — period tach with missed
// marks, ADC offset/noise/quantisation, supply sag, 3-segment commutator ripple, and a
// current-sensor gain error drawn within its declared tolerance. The acceptance limits are
// those of the fitter's specification (R 2 %, Ke 1 %, J 5 %, Tc 10 %, b 25 % in every seed;
// k = 2 expanded uncertainty covering the truth in ≥ 90 % of seeds per parameter).
#include <doctest/doctest.h>
#include <fmt/format.h>

#include <cmath>

#include "fit/fit.h"
#include "model/copper.h"
#include "tests/fit/plan.h"

using namespace rb;
using namespace rb::fit;

namespace {

const int kChecked[5] = {model::kR, model::kKe, model::kJ, model::kTc, model::kB};
const double kTolerance[5] = {0.02, 0.01, 0.05, 0.10, 0.25};

std::string Row(const FitSummary& s, const model::MotorParams& truth) {
  std::string out;
  for (int k = 0; k < 5; ++k) {
    const ParamResult& p = s.params[static_cast<size_t>(kChecked[k])];
    const double tv = model::Get(truth, kChecked[k]);
    out += fmt::format(" {} {:+.2f}% (z {:+.1f})", model::kParamNames[static_cast<size_t>(kChecked[k])].substr(0, 2),
                       100 * (p.value / tv - 1), (p.value - tv) / p.u_combined);
  }
  return out;
}

}  // namespace

TEST_CASE("standard plan, 20 seeds: every constant within its tolerance, k=2 covers the truth") {
  // Source: simulated truth (model/simulate.h, DemoBench). Limits: see the file header.
  constexpr int kSeeds = 20;
  int covered[5] = {0};
  std::string table;
  for (int seed = 1; seed <= kSeeds; ++seed) {
    const model::BenchModel bench = model::DemoBench(static_cast<std::uint64_t>(seed));
    double gain = 0;
    const auto runs = testing::StandardPlan(bench, static_cast<std::uint64_t>(seed), {}, &gain);
    REQUIRE(runs.size() == 10);
    Result<FitSummary> s = FitRuns(runs, {});
    REQUIRE_MESSAGE(s.ok(), "seed ", seed, ": ", s.status().message());
    CHECK(s->model.brush_drop);  // two voltage levels: the brush drop is fitted
    table += fmt::format("seed {:2} gain {:+.2f}%{}\n", seed, 100 * gain, Row(*s, bench.motor));
    for (int k = 0; k < 5; ++k) {
      const ParamResult& p = s->params[static_cast<size_t>(kChecked[k])];
      const double tv = model::Get(bench.motor, kChecked[k]);
      REQUIRE(p.fitted);
      REQUIRE(p.identified);
      CHECK_MESSAGE(std::fabs(p.value / tv - 1) <= kTolerance[k], "seed ", seed, " ",
                    model::kParamNames[static_cast<size_t>(kChecked[k])]);
      if (std::fabs(p.value - tv) <= 2 * p.u_combined) ++covered[k];
    }
  }
  table += fmt::format("k=2 coverage: R {}/20, Ke {}/20, J {}/20, Tc {}/20, b {}/20\n", covered[0],
                       covered[1], covered[2], covered[3], covered[4]);
  MESSAGE("\n" << table);
  for (int k = 0; k < 5; ++k) {
    CHECK_MESSAGE(covered[k] >= 18, model::kParamNames[static_cast<size_t>(kChecked[k])], ": ",
                  covered[k], "/20 covered");
  }
}

TEST_CASE("a coast-down alone cannot give R or Ke: no numbers for them") {
  // Source: the coast-down equation J·dω/dt = −Tc − b·ω (domain notes §1.1–1.2): with speed
  // only, J, Tc and b scale together and R, Ke do not appear.
  const model::BenchModel bench = model::DemoBench(3);
  model::RunScript cd;
  cd.kind = model::RunKind::kCoastDown;
  cd.volts = 6;
  cd.duration_s = 20;
  auto sim = model::SimulateRun(bench, cd);
  REQUIRE(sim.ok());
  SUBCASE("speed only (the classic coast-down)") {
    RunData r = testing::ToRunData(*sim, 1);
    for (model::Sample& s : r.samples) s.current = s.voltage = NAN;
    Result<FitSummary> f = FitRuns({r}, {});
    REQUIRE_FALSE(f.ok());
    CHECK(f.status().code() == Code::kFailedPrecondition);
    CHECK(f.status().message().find("not R or Ke") != std::string::npos);
  }
  SUBCASE("with the open-circuit voltage: Ke from the generator test, still no R") {
    RunData r = testing::ToRunData(*sim, 1);
    Result<FitSummary> f = FitRuns({r}, {});
    REQUIRE_MESSAGE(f.ok(), f.status().message());
    const ParamResult& R = f->params[model::kR];
    CHECK_FALSE(R.identified);
    CHECK_FALSE(R.fitted);
    CHECK(std::isnan(R.value));
    const ParamResult& ke = f->params[model::kKe];
    REQUIRE(ke.identified);
    CHECK(ke.value == doctest::Approx(bench.motor.Ke).epsilon(0.01));
    for (int i : {model::kJ, model::kTc, model::kB}) CHECK_FALSE(f->params[static_cast<size_t>(i)].identified);
    bool said = false;
    for (const Diagnostic& d : f->diagnostics) {
      said = said || (d.param == "R_ohm" && d.severity == Diagnostic::Severity::kWarning &&
                      !d.suggestion.empty());
    }
    CHECK(said);
  }
}

TEST_CASE("a single steady state identifies nothing: an error, not a result") {
  const model::BenchModel bench = model::DemoBench(4);
  model::RunScript st;
  st.kind = model::RunKind::kSteady;
  st.volts = 6;
  st.duration_s = 0.5;
  auto sim = model::SimulateRun(bench, st);
  REQUIRE(sim.ok());
  Result<FitSummary> f = FitRuns({testing::ToRunData(*sim, 1)}, {});
  REQUIRE_FALSE(f.ok());
  CHECK(f.status().code() == Code::kFailedPrecondition);
  CHECK(f.status().message().find("cannot determine") != std::string::npos);
}

TEST_CASE("bad start values cost iterations, not the answer") {
  // Source: simulated truth; the fit from the closed-form start is the reference. From a
  // start off by ×2.5 in every constant the answer agrees with it within its uncertainty
  // and stays within the specification's tolerances.
  const model::BenchModel bench = model::DemoBench(5);
  const auto runs = testing::StandardPlan(bench, 5);
  Result<FitSummary> ref = FitRuns(runs, {});
  REQUIRE(ref.ok());
  for (double f : {0.4, 2.5}) {
    FitOptions o;
    model::MotorParams start = bench.motor;
    start.R *= f;
    start.Ke /= f;
    start.J *= f * f;
    start.Tc /= f;
    start.b *= f;
    o.start = start;
    Result<FitSummary> s = FitRuns(runs, o);
    REQUIRE_MESSAGE(s.ok(), s.status().message());
    for (int k = 0; k < 5; ++k) {
      const ParamResult& a = s->params[static_cast<size_t>(kChecked[k])];
      const ParamResult& b = ref->params[static_cast<size_t>(kChecked[k])];
      const double tv = model::Get(bench.motor, kChecked[k]);
      CHECK_MESSAGE(std::fabs(a.value - b.value) <= b.u_combined, "start ×", f, " ",
                    model::kParamNames[static_cast<size_t>(kChecked[k])]);
      CHECK(std::fabs(a.value / tv - 1) <= kTolerance[k]);
    }
  }
}

TEST_CASE("model choice follows the data: one voltage level holds Vb at 0 and says so") {
  const model::BenchModel bench = model::DemoBench(6);
  testing::PlanSpec spec;
  spec.locked_positions = 0;
  spec.spin_volts = {6.0};
  spec.coast_volts = {6.0};
  Result<FitSummary> s = FitRuns(testing::StandardPlan(bench, 6, spec), {});
  REQUIRE_MESSAGE(s.ok(), s.status().message());
  CHECK_FALSE(s->model.brush_drop);
  CHECK_FALSE(s->params[model::kVb].fitted);
  CHECK(s->params[model::kVb].value == 0.0);
  bool said = false;
  for (const Diagnostic& d : s->diagnostics) said = said || d.message.find("Vb needs two") != std::string::npos;
  CHECK(said);
  // Ke does not depend on the brush drop (open-circuit voltage): still within 1 %.
  CHECK(s->params[model::kKe].value == doctest::Approx(bench.motor.Ke).epsilon(0.01));
}

TEST_CASE("missed tach marks and current spikes are set aside and counted") {
  // Source: simulated truth with 2 % of marks missed (each gives one reading at half the
  // speed) and interference spikes of 2 A on 0.2 % of current samples.
  model::BenchModel bench = model::DemoBench(7);
  bench.instruments.tach.miss_probability = 0.02;
  bench.instruments.current.spike_probability = 0.002;
  bench.instruments.current.spike_size = 2.0;
  Result<FitSummary> s = FitRuns(testing::StandardPlan(bench, 7), {});
  REQUIRE_MESSAGE(s.ok(), s.status().message());
  for (int k = 0; k < 5; ++k) {
    const double tv = model::Get(bench.motor, kChecked[k]);
    CHECK(std::fabs(s->params[static_cast<size_t>(kChecked[k])].value / tv - 1) <= kTolerance[k]);
  }
  std::size_t speed_out = 0, current_out = 0;
  for (const RunFit& r : s->runs) {
    for (const ChannelFit& c : r.channels) {
      if (c.channel == "speed") speed_out += c.outliers;
      if (c.channel == "current") current_out += c.outliers;
    }
  }
  CHECK(speed_out >= 10);
  CHECK(current_out >= 10);
}

TEST_CASE("R is corrected to 20 °C with the IEC 60028 copper coefficient") {
  // Source: IEC 60028, α20 = 0.00393 /K: R20 = R_T / (1 + α20·(T − 20 °C)).
  const model::BenchModel bench = model::DemoBench(8);
  auto runs = testing::StandardPlan(bench, 8);
  for (RunData& r : runs) r.ambient_C = 30.0;
  Result<FitSummary> s = FitRuns(runs, {});
  REQUIRE(s.ok());
  REQUIRE(s->R20.has_value());
  CHECK(*s->temperature_C == 30.0);
  CHECK(*s->R20 == doctest::Approx(s->params[model::kR].value / (1 + 0.00393 * 10)).epsilon(1e-12));
  CHECK(*s->R20_u > s->params[model::kR].u_combined / 1.0393);  // the temperature adds to it
}

TEST_CASE("a current-sensor gain uncertainty moves R, J, Tc and b by the same fraction") {
  // Source: the model's scaling (J·dω/dt = Kt·i − …, V = R·i + …): reading the current
  // high by a fraction g lowers R and raises J, Tc and b by g, and leaves Ke alone.
  const model::BenchModel bench = model::DemoBench(9);
  Result<FitSummary> s = FitRuns(testing::StandardPlan(bench, 9), {});
  REQUIRE(s.ok());
  const double gain_u = 0.01 / std::sqrt(3.0);
  std::array<double, model::kNumParams> rel{};
  for (const BudgetLine& b : s->budget) {
    if (b.source == "current sensor gain") {
      rel[static_cast<size_t>(b.param)] = b.u / std::fabs(s->params[static_cast<size_t>(b.param)].value);
    }
  }
  for (int i : {model::kR, model::kJ, model::kTc, model::kB}) {
    CHECK(rel[static_cast<size_t>(i)] == doctest::Approx(gain_u).epsilon(0.15));
  }
  CHECK(rel[model::kKe] < 0.01 * gain_u);
  for (int i : {model::kR, model::kJ, model::kTc, model::kB}) {
    const ParamResult& p = s->params[static_cast<size_t>(i)];
    CHECK(p.u_combined > p.stderr_stat);
  }
}

TEST_CASE("quick plan (one spin-up and one coast-down): Ke and J from under 5k samples") {
  const model::BenchModel bench = model::DemoBench(10);
  testing::PlanSpec spec;
  spec.locked_positions = 0;
  spec.spin_volts = {6.0};
  spec.coast_volts = {6.0};
  auto runs = testing::StandardPlan(bench, 10, spec);
  runs[1].samples.resize(runs[1].samples.size() * 2 / 5);  // the first 40 % of the coast-down
  std::size_t n = 0;
  for (const RunData& r : runs) n += r.samples.size();
  CHECK(n <= 5000);
  Result<FitSummary> s = FitRuns(runs, {});
  REQUIRE_MESSAGE(s.ok(), s.status().message());
  MESSAGE("quick plan: ", n, " samples fitted in ", s->solve_seconds, " s");
  CHECK(s->params[model::kKe].value == doctest::Approx(bench.motor.Ke).epsilon(0.01));
  CHECK(s->params[model::kJ].value == doctest::Approx(bench.motor.J).epsilon(0.05));
}

TEST_CASE("bad input: one-line errors naming the run and the sample") {
  // Source: the fitter's contract (fit/fit.h, issue 4): no runs, NaN times, time going
  // back, infinite readings and runs without any reading are errors, never a result.
  // (Equal times are allowed: two instruments can read at the same instant.)
  CHECK(FitRuns({}, {}).status().code() == Code::kInvalidArgument);
  CHECK(FitRuns({}, {}).status().message().find("no runs") != std::string::npos);
  const model::BenchModel bench = model::DemoBench(11);
  std::vector<RunData> runs = testing::StandardPlan(bench, 11);
  REQUIRE(runs.size() == 10);
  struct Case {
    void (*spoil)(RunData*);
    const char* says;
  };
  const Case cases[] = {
      {[](RunData* r) { r->samples[5].t = NAN; }, "sample 6: time is not a finite number"},
      {[](RunData* r) { r->samples[7].current = INFINITY; }, "sample 8: current reading is infinite"},
      {[](RunData* r) {
         for (model::Sample& s : r->samples) s.speed = s.current = s.voltage = NAN;
       },
       "every reading is empty"},
      {[](RunData* r) { r->samples[3].t = r->samples[2].t - 1e-3; }, "sample 4: time"},
  };
  for (const Case& c : cases) {
    std::vector<RunData> bad = runs;
    c.spoil(&bad[7]);
    Result<FitSummary> f = FitRuns(bad, {});
    REQUIRE_FALSE(f.ok());
    CHECK(f.status().code() == Code::kInvalidArgument);
    const std::string& m = f.status().message();
    CHECK_MESSAGE(m.find("run " + std::to_string(bad[7].id)) != std::string::npos, m);
    CHECK_MESSAGE(m.find(c.says) != std::string::npos, m);
    CHECK(m.find('\n') == std::string::npos);
  }
}
