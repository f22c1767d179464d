// rotorbench calibrate against rig-sim over a real PTY: the stored gains and offsets are
// compared with the errors the simulated instruments were given (simulated truth), and
// the tach check with the closed-form steady speed of the simulated motor.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include "model/closed_form.h"
#include "model/demo.h"
#include "model/units.h"
#include "storage/storage.h"
#include "tests/acquire/pty_helpers.h"

using namespace rb;
using namespace rb::testing;

TEST_CASE("calibrate zero and shunt recover the simulated current sensor's offset and gain") {
  TempDir dir;
  const std::string db = dir.File("b.db"), link = dir.File("rig");
  // The current sensor reads 2 % high with a +10 mA offset: raw = 1.02·I + 0.010.
  Child sim({ROTORBENCH_BIN, "rig-sim", "--link", link, "--resistor", "2", "--current-gain-error", "0.02",
             "--current-offset", "0.01", "--max-seconds", "60"},
            dir.File("sim.log"));
  REQUIRE(WaitForPath(link));
  CommandResult z = RunRotorbench({"--db", db, "calibrate", "zero", "--port", link, "--yes"});
  INFO(z.out << z.err);
  REQUIRE(z.exit_code == 0);
  CommandResult s = RunRotorbench({"--db", db, "calibrate", "shunt", "--port", link, "--ohms", "2",
                                   "--levels", "0.2,0.4,0.6", "--seconds", "0.5", "--yes"});
  INFO(s.out << s.err);
  REQUIRE(s.exit_code == 0);
  auto d = storage::Database::Open(db);
  REQUIRE(d.ok());
  auto cal = d->LatestCalibration("rig-sim#1", "current");
  REQUIRE(cal.ok());
  REQUIRE(cal->has_value());
  // Truth: I = (raw − 0.010)/1.02, so gain 1/1.02 and offset 0.010 A. Tolerances: the
  // readings carry 4 mA noise and 1 mA steps over ~1000 samples per level (σ of a mean
  // ≈ 0.1 mA), so 0.3 % on gain and 2 mA on offset are generous but would catch a sign
  // or factor error.
  CHECK((*cal)->gain == doctest::Approx(1.0 / 1.02).epsilon(0.003));
  CHECK((*cal)->offset == doctest::Approx(0.010).epsilon(0.2));
  CHECK((*cal)->gain_u > 0);
  CHECK((*cal)->gain_u < 0.01);
  // The zero check alone saw the offset too (output off: raw = 0.010), same tolerance.
  const std::size_t at = z.out.find("offset ");
  REQUIRE(at != std::string::npos);
  CHECK(std::stod(z.out.substr(at + 7)) == doctest::Approx(0.010).epsilon(0.2));
}

TEST_CASE("calibrate tach against the simulated motor's closed-form speed, record links it") {
  TempDir dir;
  const std::string db = dir.File("b.db"), link = dir.File("rig");
  Child sim({ROTORBENCH_BIN, "rig-sim", "--link", link, "--friction", "2", "--max-seconds", "60"}, dir.File("sim.log"));
  REQUIRE(WaitForPath(link));
  // Steady no-load speed of the demo motor at 6 V behind the bench's 0.08 Ω supply:
  // ω = (Kt(V − Vb) − R·Tc)/(Kt·Ke + b·R) (closed form, model/closed_form.h).
  model::MotorParams m = model::DemoMotor();
  m.R += model::DemoBench().supply.internal_resistance_ohm;
  m.Tc = 2e-3;
  const double rpm = units::RadPerSecToRpm(model::SteadyState(m, 6.0).w);
  CommandResult t = RunRotorbench({"--db", db, "calibrate", "tach", "--port", link, "--reference-rpm",
                                   std::to_string(rpm), "--seconds", "0.5", "--yes"});
  INFO(t.out << t.err);
  REQUIRE(t.exit_code == 0);
  auto d = storage::Database::Open(db);
  auto cal = d->LatestCalibration("rig-sim#1", "speed");
  REQUIRE(cal.ok());
  REQUIRE(cal->has_value());
  // The simulated tach is exact, so the gain is 1 up to how well the closed form (constant
  // mean resistance) describes the simulated commutator: within 1 %.
  CHECK((*cal)->gain == doctest::Approx(1.0).epsilon(0.01));

  REQUIRE(RunRotorbench({"--db", db, "motor", "add", "M1"}).exit_code == 0);
  CommandResult r = RunRotorbench({"--db", db, "record", "--port", link, "--motor", "M1", "--yes", "--plan", "quick"});
  INFO(r.out << r.err);
  REQUIRE(r.exit_code == 0);
  auto runs = d->ListRuns();
  REQUIRE(!runs->empty());
  auto linked = d->RunCalibrations((*runs)[0].id);
  REQUIRE(linked.ok());
  REQUIRE(linked->size() == 1);
  CHECK((*linked)[0].id == (*cal)->id);
}
