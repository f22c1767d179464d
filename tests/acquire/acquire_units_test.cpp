// Acquisition pieces without PTYs: the streaming tach against the model's reference
// tach, the run cutter against simulated runs with known step times, the simulated
// firmware's limits, text-instrument parsing, and RigLink on the scripted fake port.
#include <doctest/doctest.h>

#include <cmath>

#include "acquire/rig_link.h"
#include "acquire/run_cutter.h"
#include "acquire/sim_firmware.h"
#include "acquire/tach.h"
#include "acquire/text_instrument.h"
#include "model/demo.h"
#include "model/simulate.h"

using namespace rb;
using namespace rb::acquire;

TEST_CASE("streaming tach gives exactly the model's period-based readings") {
  // Reference: model::TachReadings (the simulator's definition of the instrument).
  model::BenchModel bench = model::DemoBench(5);
  bench.instruments.tach.miss_probability = 0.02;  // some half-speed readings too
  model::BenchSimulator sim(bench);
  model::Observations obs;
  sim.AdvanceTo(0.3, &obs);  // at rest
  sim.SetSupplyVolts(6);
  sim.SetDrive(model::Drive::kConnected);
  sim.AdvanceTo(0.8, &obs);
  sim.SetDrive(model::Drive::kOpenCircuit);
  sim.AdvanceTo(5.0, &obs);  // coasts to a stop
  const std::vector<model::Sample> want = model::TachReadings(obs.tach_marks, bench.instruments.tach, 0.0, 5.0);
  std::vector<model::Sample> got;
  TachTracker tt(TachOptions{bench.instruments.tach.marks_per_rev, bench.instruments.tach.stop_timeout_s,
                             bench.instruments.tach.zero_interval_s},
                 0.0);
  for (double m : obs.tach_marks) tt.Mark(m, &got);
  tt.Advance(5.0, &got);
  REQUIRE(got.size() == want.size());
  for (std::size_t k = 0; k < got.size(); ++k) {
    CHECK(got[k].t == want[k].t);
    CHECK(got[k].speed == want[k].speed);
  }
  CHECK(tt.at_rest());
}

namespace {
struct Cut {
  model::RunKind kind;
  double t0;
  std::string why, end;
  double t_end = NAN;
  std::size_t n = 0;
};
std::vector<Cut> CutAll(const std::vector<model::Sample>& samples) {
  std::vector<Cut> cuts;
  RunSink sink;
  sink.begin = [&](model::RunKind k, double t0, const std::string& why) { cuts.push_back({k, t0, why, ""}); };
  sink.add = [&](const model::Sample&) { ++cuts.back().n; };
  sink.end = [&](const std::string& r, double t) {
    cuts.back().end = r;
    cuts.back().t_end = t;
  };
  RunCutter c(CutterOptions{}, sink);
  for (const model::Sample& s : samples) c.Feed(s);
  c.Close("end of data");
  return cuts;
}
}  // namespace

TEST_CASE("run cutter finds a simulated spin-up where the supply was switched on") {
  model::RunScript script;
  script.kind = model::RunKind::kSpinUp;
  script.volts = 6;
  script.pre_s = 0.4;
  script.duration_s = 1.5;
  auto run = model::SimulateRun(model::DemoBench(2), script);
  REQUIRE(run.ok());
  const std::vector<Cut> cuts = CutAll(run->samples);
  REQUIRE(cuts.size() >= 2);
  CHECK(cuts[0].kind == model::RunKind::kSpinUp);
  // Triggered by the first current reading after the switch (2 kHz ⇒ within 0.5 ms of the
  // true step time), and the run starts preroll_s (0.2 s) earlier.
  CHECK(cuts[0].t0 == doctest::Approx(run->step_time_s - 0.2).epsilon(0.002));
  CHECK(cuts[1].kind == model::RunKind::kSteady);
  // Steady within a few mechanical time constants (τm ≈ 78 ms for the demo motor).
  CHECK(cuts[1].t0 - run->step_time_s < 0.8);
  CHECK(cuts[1].t0 - run->step_time_s > 0.2);
}

TEST_CASE("run cutter finds a simulated coast-down at the switch-off and ends it at the stop") {
  model::BenchModel bench = model::DemoBench(3);
  bench.motor.Tc = 2e-3;  // stops in well under a second
  model::RunScript script;
  script.kind = model::RunKind::kCoastDown;
  script.volts = 6;
  script.pre_s = 0.3;
  script.duration_s = 3;
  auto run = model::SimulateRun(bench, script);
  REQUIRE(run.ok());
  const std::vector<Cut> cuts = CutAll(run->samples);
  const Cut* coast = nullptr;
  for (const Cut& c : cuts) {
    if (c.kind == model::RunKind::kCoastDown) coast = &c;
  }
  REQUIRE(coast != nullptr);
  // The first zero-current reading after the switch, less coast_preroll_s (0.1 s).
  CHECK(coast->t0 == doctest::Approx(run->step_time_s - 0.1).epsilon(0.003));
  CHECK(coast->end == "stopped");
  CHECK(coast->t_end < run->samples.back().t);
}

TEST_CASE("run cutter: current without rotation is a locked-rotor run") {
  model::RunScript script;
  script.kind = model::RunKind::kLocked;
  script.volts = 1.0;
  script.pre_s = 0.3;
  script.duration_s = 0.3;
  auto run = model::SimulateRun(model::DemoBench(4), script);
  REQUIRE(run.ok());
  const std::vector<Cut> cuts = CutAll(run->samples);
  REQUIRE(cuts.size() == 1);
  CHECK(cuts[0].kind == model::RunKind::kLocked);
  CHECK(cuts[0].end == "current off");
}

namespace {
/// Feeds host commands to the simulated firmware and collects its events.
struct FwHarness {
  SimFirmware fw;
  std::vector<EventMsg> events;
  FrameDecoder dec{[this](const Frame& f, std::int64_t) {
    if (auto* e = std::get_if<EventMsg>(&f.msg)) events.push_back(*e);
  }};
  std::uint16_t seq = 0;
  explicit FwHarness(const SimRigOptions& o) : fw(o) {}
  void Cmd(const Message& m) {
    std::vector<std::uint8_t> w;
    EncodeFrame(seq++, 0, m, &w);
    fw.Receive(w);
  }
  void Run(double t) {
    fw.AdvanceTo(t);
    dec.Feed(fw.TakeOutput());
  }
  const EventMsg* Find(std::uint8_t code) const {
    for (const EventMsg& e : events) {
      if (e.code == code) return &e;
    }
    return nullptr;
  }
};
SimRigOptions Rig() {
  SimRigOptions o;
  o.bench = model::DemoBench(1);
  return o;
}
}  // namespace

TEST_CASE("simulated rig enforces its current limit") {
  SimRigOptions o = Rig();
  o.current_limit_A = 1.0;  // the demo motor draws ~3 A at switch-on from 6 V
  FwHarness h(o);
  h.Run(0.1);
  h.Cmd(SetOutputCmd{1000});
  h.Run(0.3);
  const EventMsg* trip = h.Find(proto::kEvCurrentTrip);
  REQUIRE(trip != nullptr);
  CHECK(trip->value > 1.0f);
  CHECK(trip->t_us - 100000u < 3000u);  // within a few ms of switch-on
  const EventMsg* off = h.Find(proto::kEvOutputOff);
  REQUIRE(off != nullptr);
  CHECK(off->arg == proto::kCauseCurrentTrip);
  CHECK(!h.fw.output_on());
}

TEST_CASE("simulated rig enforces its locked-rotor and watchdog limits") {
  SUBCASE("locked rotor") {
    SimRigOptions o = Rig();
    o.locked_limit_ms = 200;
    o.shaft_held = true;
    FwHarness h(o);
    h.Cmd(SetOutputCmd{100});
    for (double t = 0.05; t < 0.6; t += 0.05) {
      h.Cmd(PingCmd{1});  // the host is alive: only the locked-rotor limit applies
      h.Run(t);
    }
    const EventMsg* trip = h.Find(proto::kEvLockedTrip);
    REQUIRE(trip != nullptr);
    CHECK(trip->t_us == doctest::Approx(200000).epsilon(0.02));
    CHECK(!h.fw.output_on());
  }
  SUBCASE("watchdog") {
    SimRigOptions o = Rig();
    o.watchdog_ms = 300;
    FwHarness h(o);
    h.Cmd(SetOutputCmd{500});
    h.Run(1.0);  // no host frame after the command
    const EventMsg* trip = h.Find(proto::kEvWatchdogTrip);
    REQUIRE(trip != nullptr);
    CHECK(trip->t_us == doctest::Approx(300000).epsilon(0.02));
  }
}

TEST_CASE("text instrument maps: fields, units, filters and errors that name the place") {
  auto map = ParseTextInstrumentMap(
      "name = \"meter\"\n[match]\nfield = 1\ntext = \"I\"\n"
      "[[field]]\nindex = 2\nquantity = \"current\"\nunit = \"mA\"\n"
      "[[field]]\nindex = 4\nquantity = \"speed\"\nunit = \"rpm\"\n",
      "meter.toml");
  REQUIRE(map.ok());
  auto s = ParseTextLine(*map, "I 250 S 6000rpm", 1.5);
  REQUIRE(s.ok());
  REQUIRE(s->has_value());
  CHECK((*s)->t == 1.5);
  CHECK((*s)->current == doctest::Approx(0.25));
  CHECK((*s)->speed == doctest::Approx(6000 * 2 * M_PI / 60));  // 1 rpm = 2π/60 rad/s
  CHECK(std::isnan((*s)->voltage));
  auto other = ParseTextLine(*map, "T 17", 0);
  REQUIRE(other.ok());
  CHECK(!other->has_value());  // not one of ours
  auto bad = ParseTextLine(*map, "I 2x5 S 1", 0);
  CHECK(bad.status().message() == "meter: field 2 '2x5' is not a number; expected a current in mA");
  auto bad_unit = ParseTextInstrumentMap("[[field]]\nindex = 1\nquantity = \"speed\"\nunit = \"furlong\"\n", "x.toml");
  CHECK(bad_unit.status().message().find("x.toml:3: unit 'furlong' is not a speed unit") == 0);
  auto bad_key = ParseTextInstrumentMap("nmae = \"a\"\n", "y.toml");
  CHECK(bad_key.status().message().find("y.toml:1: unknown key 'nmae'") == 0);
  LineSplitter split;
  std::vector<std::string> lines;
  split.Feed("a 1\r\nb", &lines);
  split.Feed(" 2\nc 3\r", &lines);
  CHECK(lines == std::vector<std::string>{"a 1", "b 2", "c 3"});
}

TEST_CASE("RigLink on the scripted port: no answer, and a vanished device, are told apart") {
  ScriptedByteSource quiet("quiet");
  RigLink a(&quiet);
  auto r = a.Identify(20, 2);
  CHECK(r.status().code() == Code::kIOError);
  CHECK(r.status().message().find("quiet: no IDENTIFY after 2 HELLOs (nothing was received)") == 0);
  CHECK(quiet.written().size() == 2 * 12);  // two HELLO frames (example 1 of the protocol)

  ScriptedByteSource gone("gone");
  gone.AddBytes({0x13, 0x37, 0x00});
  gone.AddVanish();
  RigLink b(&gone);
  CHECK(b.Poll(10).ok());
  Status s = b.Poll(10);
  CHECK(s.code() == Code::kIOError);
  CHECK(s.message().find("vanished") != std::string::npos);
  CHECK(b.counters().garbage_bytes == 2);
}
