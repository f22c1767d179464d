// The bench simulator reports what instruments would: quantised, uneven, imperfect.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <numeric>

#include "model/model.h"

using namespace rb::model;

namespace {
RunScript Script(RunKind k, double v, double dur) {
  RunScript s;
  s.kind = k;
  s.volts = v;
  s.duration_s = dur;
  return s;
}
}  // namespace

TEST_CASE("same seed, same run, another seed, another run") {
  const RunScript s = Script(RunKind::kSpinUp, 6.0, 0.3);
  auto a = SimulateRun(DemoBench(7), s);
  auto b = SimulateRun(DemoBench(7), s);
  auto c = SimulateRun(DemoBench(8), s);
  REQUIRE(a.ok());
  REQUIRE(b.ok());
  REQUIRE(c.ok());
  REQUIRE(a->samples.size() == b->samples.size());
  bool identical = true;
  for (size_t k = 0; k < a->samples.size(); ++k) {
    const Sample &x = a->samples[k], &y = b->samples[k];
    auto same = [](double p, double q) { return (std::isnan(p) && std::isnan(q)) || p == q; };
    identical = identical && same(x.t, y.t) && same(x.speed, y.speed) &&
                same(x.current, y.current) && same(x.voltage, y.voltage);
  }
  CHECK(identical);
  bool differs = a->samples.size() != c->samples.size();
  for (size_t k = 0; !differs && k < a->samples.size(); ++k) {
    differs = a->samples[k].current != c->samples[k].current;
  }
  CHECK(differs);
}

TEST_CASE("tach readings: period-based, at uneven mark times on the timer grid") {
  BenchModel m = DemoBench(3);
  m.instruments.tach.miss_probability = 0;
  auto run = SimulateRun(m, Script(RunKind::kSteady, 6.0, 0.5));
  REQUIRE(run.ok());
  std::vector<double> times, speeds;
  for (const Sample& s : run->samples) {
    if (HasSpeed(s)) {
      times.push_back(s.t);
      speeds.push_back(s.speed);
    }
  }
  REQUIRE(speeds.size() > 100);
  // Mark times sit on the 1 µs timer grid (the run's clock starts at an integer µs).
  for (double t : times) CHECK(std::fabs(t * 1e6 - std::round(t * 1e6)) < 1e-3);
  // Readings agree with the true speed within the timer quantisation and ripple.
  const double w_true = run->truth.back().w;
  for (double w : speeds) CHECK(w == doctest::Approx(w_true).epsilon(0.02));
  // Speed readings are not on the ADC grid: they arrive between ADC samples.
  size_t off_grid = 0;
  for (double t : times) {
    const double k = t * m.instruments.adc_rate_hz;
    if (std::fabs(k - std::round(k)) > 1e-6) ++off_grid;
  }
  CHECK(off_grid > times.size() * 9 / 10);
}

TEST_CASE("a missed tach mark gives one reading at half the speed") {
  BenchModel m = DemoBench(5);
  m.instruments.tach.miss_probability = 0.05;
  auto run = SimulateRun(m, Script(RunKind::kSteady, 6.0, 1.0));
  REQUIRE(run.ok());
  const double w_true = run->truth.back().w;
  int half = 0, total = 0;
  for (const Sample& s : run->samples) {
    if (!HasSpeed(s)) continue;
    ++total;
    if (std::fabs(s.speed / w_true - 0.5) < 0.03) ++half;
  }
  const double frac = static_cast<double>(half) / total;
  CHECK(frac > 0.03);
  CHECK(frac < 0.08);
}

TEST_CASE("current sensor offset and gain error show in the readings") {
  BenchModel m = DemoBench(11);
  m.commutator.segments = 0;
  m.motor.L = 0;
  m.instruments.current.offset = 0.02;
  m.instruments.current.gain_error = 0.05;
  m.instruments.current.noise_sd = 0;
  RunScript s = Script(RunKind::kLocked, 3.0, 0.2);
  auto run = SimulateRun(m, s);
  REQUIRE(run.ok());
  double before = 0, during = 0;
  int nb = 0, nd = 0;
  for (const Sample& x : run->samples) {
    if (!HasCurrent(x)) continue;
    if (x.t < s.pre_s - 1e-9) { before += x.current; ++nb; }
    else if (x.t > s.pre_s + 0.01 && x.t < s.pre_s + s.duration_s) { during += x.current; ++nd; }
  }
  REQUIRE(nb > 10);
  REQUIRE(nd > 10);
  CHECK(before / nb == doctest::Approx(0.02).epsilon(0.03));
  const double i_true = (3.0 - m.motor.Vb) / (m.motor.R + m.supply.internal_resistance_ohm);
  CHECK(during / nd == doctest::Approx(i_true * 1.05 + 0.02).epsilon(2e-3));
}

TEST_CASE("commutator ripple: six current ripples per revolution on a 3-segment motor") {
  BenchModel m = DemoBench(2);
  m.instruments.current.noise_sd = 0;
  m.instruments.current.lsb = 1e-6;
  m.instruments.adc_rate_hz = 50000;
  auto run = SimulateRun(m, Script(RunKind::kSteady, 3.0, 0.2));
  REQUIRE(run.ok());
  // Count upward crossings of the mean current; compare with revolutions turned.
  std::vector<double> i;
  for (const Sample& s : run->samples) if (HasCurrent(s)) i.push_back(s.current);
  const double mean = std::accumulate(i.begin(), i.end(), 0.0) / static_cast<double>(i.size());
  int crossings = 0;
  for (size_t k = 1; k < i.size(); ++k) crossings += (i[k - 1] < mean && i[k] >= mean);
  const double revs = (run->truth.back().theta - run->truth.front().theta) / (2 * std::numbers::pi);
  CHECK(crossings / revs == doctest::Approx(6.0).epsilon(0.05));
}

TEST_CASE("locked-rotor current depends on rotor position (2/3 vs 1/2 of a coil)") {
  BenchModel m = DemoBench(4);
  m.motor.L = 0;
  m.motor.Vb = 0;
  m.supply.internal_resistance_ohm = 0;
  m.instruments.current.noise_sd = 0;
  m.instruments.current.lsb = 1e-6;
  const double pitch = 2 * std::numbers::pi / 3;
  std::vector<double> currents;
  for (double frac : {0.0, 0.25, 0.5, 0.75}) {
    RunScript s = Script(RunKind::kLocked, 2.0, 0.05);
    s.rotor_angle = frac * pitch;
    auto run = SimulateRun(m, s);
    REQUIRE(run.ok());
    currents.push_back(run->samples[run->samples.size() / 2].current);
  }
  const auto [lo, hi] = std::minmax_element(currents.begin(), currents.end());
  CHECK(*hi / *lo == doctest::Approx(4.0 / 3.0).epsilon(1e-3));  // (2/3) / (1/2)
}

TEST_CASE("coast-down ends after the stop and the terminal voltage follows Ke·ω") {
  BenchModel m = DemoBench(9);
  m.instruments.voltage.noise_sd = 0;
  auto run = SimulateRun(m, Script(RunKind::kCoastDown, 6.0, 30.0));
  REQUIRE(run.ok());
  const double stop = run->step_time_s + CoastDownStopTime(m.motor, run->truth.front().w);
  CHECK(run->samples.back().t > stop);
  CHECK(run->samples.back().t < stop + 1.0);
  double last_speed = NAN;
  for (const Sample& x : run->samples) if (HasSpeed(x)) last_speed = x.speed;
  CHECK(last_speed == 0.0);  // the tach reports standstill
  for (size_t k = 0; k < run->truth.size(); k += 97) {
    const TrueState& x = run->truth[k];
    if (x.t > run->step_time_s + 1e-3) CHECK(x.v_terminal == doctest::Approx(m.motor.Ke * x.w));
  }
}

TEST_CASE("generator runs need an external drive and are refused") {
  RunScript s;
  s.kind = RunKind::kGenerator;
  auto run = SimulateRun(DemoBench(), s);
  CHECK_FALSE(run.ok());
  CHECK(run.status().code() == rb::Code::kUnsupported);
}
