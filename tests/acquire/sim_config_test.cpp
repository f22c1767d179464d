// rig-sim configuration: a TOML motor file in trade units becomes the SI bench model
// (conversions per model/units.h: Kv [rpm/V] = 60/(2π·Ke), 1 g·cm² = 1e-7 kg·m²), command
// line overrides win, and mistakes are refused naming FILE:LINE.
#include <doctest/doctest.h>

#include <cmath>

#include "acquire/sim_config.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::acquire;

TEST_CASE("motor file values become SI, overrides win, errors name the line") {
  testing::TempDir dir;
  const std::string f = dir.File("m.toml");
  testing::WriteFile(f,
                     "[motor]\nresistance_ohm = 2.5\nkv_rpm_per_V = 1000\ninertia_g_cm2 = 20\nfriction_mN_m = 0.5\n"
                     "[bench]\nsupply_V = 12\nseed = 9\n[adc]\ncurrent_gain_error = 0.01\n[rig]\nname = \"bench-a\"\n");
  auto rig = BuildSimRig(f, {});
  REQUIRE(rig.ok());
  CHECK(rig->bench.motor.R == 2.5);
  CHECK(rig->bench.motor.Ke == doctest::Approx(60.0 / (2 * M_PI * 1000)));  // 9.549 mV·s/rad
  CHECK(rig->bench.motor.J == doctest::Approx(20e-7));
  CHECK(rig->bench.motor.Tc == doctest::Approx(0.5e-3));
  CHECK(rig->supply_volts == 12);
  CHECK(rig->bench.seed == 9u);
  CHECK(rig->bench.instruments.current.gain_error == 0.01);
  CHECK(rig->name == "bench-a");
  SimOverrides o;
  o.resistance_ohm = 3.0;
  o.seed = 4;
  auto over = BuildSimRig(f, o);
  REQUIRE(over.ok());
  CHECK(over->bench.motor.R == 3.0);
  CHECK(over->bench.seed == 4u);

  testing::WriteFile(f, "[motor]\nresistance_ohm = 2.5\nresistence = 3\n");
  auto bad = BuildSimRig(f, {});
  CHECK(bad.status().message().find(f + ":3: unknown key 'resistence' in [motor]") == 0);
  testing::WriteFile(f, "[motor]\nresistance_ohm = -1\n");
  CHECK(BuildSimRig(f, {}).status().message().find("R, Kv, inertia must be > 0") != std::string::npos);
  CHECK(BuildSimRig(dir.File("missing.toml"), {}).status().code() == Code::kNotFound);
}
