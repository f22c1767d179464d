// rotorbench rig-sim — a simulated rig on a pseudo-terminal.
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <memory>

#include "acquire/sim_config.h"
#include "acquire/sim_runner.h"
#include "cli/context.h"
#include "cli/signals.h"

namespace rb::cli {

void AddRigSimCommand(CLI::App& app, Context& ctx) {
  struct Opts {
    acquire::SimRunnerOptions run;
    acquire::SimOverrides ov;
    std::string motor_file, name = "rig-sim";
    std::uint32_t serial = 1;
    double frame_ms = 10;
    std::uint32_t clock_start = 0;
    int drop_every = 0, corrupt_every = 0;
    double garbage_every = 0;
    std::vector<double> auto_cycle;
    double auto_level = 1.0;
    bool stream = false;
    std::optional<int> locked_ms, watchdog_ms;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* s = app.add_subcommand(
      "rig-sim",
      "Run a simulated rig on a pseudo-terminal (rig link protocol v1; see firmware-protocol.md) "
      "until stopped. Motor: the demo motor, a --motor-file, and overrides.");
  s->add_option("--link", o->run.link, "Make this path a symlink to the rig's PTY (relied upon)");
  s->add_option("--motor-file", o->motor_file, "TOML file of motor and bench values (keys name their units)");
  s->add_option("--resistance", o->ov.resistance_ohm, "Armature resistance [ohm]");
  s->add_option("--kv", o->ov.kv_rpm_per_V, "Speed constant [rpm/V]");
  s->add_option("--inertia", o->ov.inertia_g_cm2, "Rotor inertia [g·cm²]");
  s->add_option("--friction", o->ov.friction_mN_m, "Coulomb friction torque [mN·m]");
  s->add_option("--viscous", o->ov.viscous_N_m_s_per_rad, "Viscous friction [N·m·s/rad]");
  s->add_option("--inductance", o->ov.inductance_mH, "Armature inductance [mH]");
  s->add_option("--brush-drop", o->ov.brush_drop_V, "Total brush drop [V]");
  s->add_option("--segments", o->ov.segments, "Commutator segments (0 = constant resistance)");
  s->add_option("--current-gain-error", o->ov.current_gain_error, "Current sensor gain error (0.01 = reads 1 % high)");
  s->add_option("--current-offset", o->ov.current_offset_A, "Current sensor offset [A]");
  s->add_option("--current-noise", o->ov.current_noise_A, "Current noise, 1 sigma [A]");
  s->add_option("--voltage-gain-error", o->ov.voltage_gain_error, "Voltage channel gain error");
  s->add_option("--tach-miss", o->ov.tach_miss_probability, "Probability that a tach mark is missed");
  s->add_option("--marks-per-rev", o->ov.marks_per_rev, "Tach marks per revolution");
  s->add_option("--adc-rate", o->ov.adc_rate_Hz, "Current/voltage sample rate [Hz] (default 2000)");
  s->add_option("--supply-volts", o->ov.supply_V, "What 100 % output applies [V] (default 6)");
  s->add_option("--supply-resistance", o->ov.supply_resistance_ohm, "Supply, lead and switch resistance [ohm]");
  s->add_option("--seed", o->ov.seed, "Random seed (noise, missed marks)");
  s->add_option("--resistor", o->ov.resistor_ohm,
                "Put a precision resistor of this many ohms in place of the motor (calibration)");
  s->add_option("--current-limit", o->ov.current_limit_A, "The rig's hard current limit [A] (default 8)");
  s->add_option("--locked-limit-ms", o->locked_ms, "The rig's locked-rotor trip time [ms] (default 1000)");
  s->add_option("--watchdog-ms", o->watchdog_ms, "The rig's host watchdog [ms] (default 1000; 0 = none)");
  s->add_option("--name", o->name, "Rig name reported in IDENTIFY (default rig-sim)");
  s->add_option("--serial", o->serial, "Rig serial number reported in IDENTIFY");
  s->add_option("--frame-ms", o->frame_ms, "Send a samples frame this often [ms] (1-20, default 10)");
  s->add_option("--clock-start-us", o->clock_start, "Device clock at start (near 4294967295 to test wraps)");
  s->add_flag("--stream", o->stream, "Stream from the start without waiting for the host");
  s->add_option("--auto-cycle", o->auto_cycle,
                "ON_S,OFF_S: switch the output on and off by itself, like a button (daemon tests)")
      ->expected(2)->delimiter(',');
  s->add_option("--auto-level", o->auto_level, "Output fraction for --auto-cycle (default 1)");
  s->add_option("--tach-link", o->run.tach_link, "Also emulate a plain-text tach on a PTY linked here");
  s->add_option("--meter-link", o->run.meter_link, "Also emulate a plain-text current/voltage meter here");
  s->add_option("--text-rate", o->run.text_rate_hz, "Lines per second of the text instruments (default 20)");
  s->add_option("--fault-drop-every", o->drop_every, "Drop every Nth frame");
  s->add_option("--fault-corrupt-every", o->corrupt_every, "Send every Nth frame with a bad CRC");
  s->add_option("--fault-garbage-every", o->garbage_every, "Send 37 garbage bytes every S seconds");
  s->add_option("--fault-stall-at", o->run.stall_at_s, "Stall (send nothing) S seconds after start");
  s->add_option("--fault-stall-for", o->run.stall_for_s, "... for this many seconds (default 0.5)");
  s->add_option("--fault-vanish-at", o->run.vanish_at_s, "Vanish like an unplugged cable S seconds after start");
  s->add_option("--fault-vanish-for", o->run.vanish_for_s, "... for this many seconds (0 = for good; default 1)");
  s->add_option("--emission-log", o->run.emission_log, "Write every frame and record built to this CSV (tests)");
  s->add_option("--max-seconds", o->run.max_seconds, "Stop by itself after this long (default: run until killed)");
  s->callback([&ctx, o] {
    ctx.action = [o]() -> Status {
      if (o->run.link.empty() && o->run.tach_link.empty() && o->run.meter_link.empty()) {
        return Status::InvalidArgument("rig-sim: give --link PATH (or --tach-link / --meter-link)");
      }
      Result<acquire::SimRigOptions> rig = acquire::BuildSimRig(o->motor_file, o->ov);
      if (!rig.ok()) return rig.status();
      rig->name = o->name;
      rig->serial = o->serial;
      rig->frame_period_s = o->frame_ms * 1e-3;
      rig->clock_start_us = o->clock_start;
      rig->drop_every = o->drop_every;
      rig->corrupt_every = o->corrupt_every;
      rig->garbage_every_s = o->garbage_every;
      rig->stream_at_start = o->stream;
      if (o->locked_ms) rig->locked_limit_ms = static_cast<std::uint16_t>(*o->locked_ms);
      if (o->watchdog_ms) rig->watchdog_ms = static_cast<std::uint16_t>(*o->watchdog_ms);
      if (o->auto_cycle.size() == 2) {
        rig->auto_on_s = o->auto_cycle[0];
        rig->auto_off_s = o->auto_cycle[1];
        rig->auto_level = o->auto_level;
      }
      RB_RETURN_IF_ERROR(acquire::ValidateSimRig(*rig));
      const volatile std::sig_atomic_t* stop = InstallStopHandlers();
      return acquire::RunSimulator(*rig, o->run, stop, [](const std::string& line) {
        std::fprintf(stdout, "%s\n", line.c_str());
        std::fflush(stdout);
      });
    };
  });
}

}  // namespace rb::cli
