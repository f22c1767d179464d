// rotorbench record — drive the rig through a test plan and store each step as a run.
#include <CLI/CLI.hpp>
#include <fmt/format.h>
#include <unistd.h>

#include <iostream>
#include <memory>
#include <optional>

#include "acquire/calibrate.h"
#include "acquire/recorder.h"
#include "fit/fit.h"
#include "qa/qa.h"
#include "cli/output.h"
#include "cli/context.h"
#include "cli/signals.h"

namespace rb::cli {

/// The usual cautions before a motor is driven (printed by record and calibrate).
void PrintDriveCautions(double current_limit_A, double max_locked_s) {
  std::fprintf(stderr,
               "Safety: rotorbench is about to drive a motor.\n"
               "  - Clamp the motor; keep hands, hair and loose clothing clear of the shaft and\n"
               "    anything fitted to it; guard it and wear eye protection.\n"
               "  - Locked-rotor pulses pass stall current through a stalled winding, which heats\n"
               "    fast: host limits %.2f A and %.2f s per pulse (change with --current-limit,\n"
               "    --max-locked). Use a current-limited supply for a first test.\n"
               "  - A coasting motor is a generator: its terminals stay live until it stops.\n"
               "  - This is general guidance; follow the rules and codes that apply where you work.\n",
               current_limit_A, max_locked_s);
}

bool AskYesNo(const std::string& question) {
  std::fprintf(stderr, "%s [y/N] ", question.c_str());
  std::fflush(stderr);
  std::string line;
  if (!std::getline(std::cin, line)) return false;
  return !line.empty() && (line[0] == 'y' || line[0] == 'Y');
}

namespace {

/// record --spec: fits the runs just recorded, stores the fit, prints the verdict.
Status FitAndCheck(storage::Database& db, const std::string& motor, const acquire::RecordSummary& sum,
                   const qa::Spec& spec, const qa::CheckOptions& check_options) {
  fit::FitOptions fo;
  for (const auto& run : sum.runs) fo.run_ids.push_back(run.id);
  Result<fit::FitSummary> f = fit::FitMotor(db, motor, fo);
  if (!f.ok()) return f.status().WithPrefix("fit of the runs just recorded");
  Result<std::int64_t> id = fit::StoreFit(db, *f);
  if (!id.ok()) return id.status();
  qa::MotorCheck check = qa::CheckFit(*f, spec, check_options);
  check.fit_id = *id;
  fmt::print("fit {} stored ({} runs, {:.0f} ms)\n", *id, fo.run_ids.size(), f->solve_seconds * 1e3);
  fmt::print("{}", qa::FormatCheck(check));
  return Status::Ok();
}

}  // namespace

void AddRecordCommands(CLI::App& app, Context& ctx) {
  struct Opts {
    std::string port;
    acquire::RecordOptions rec;
    int baud = 115200;
    std::string spec;  // --spec: fit the new runs and print the verdict
    std::string rule = "guard-band";
  };
  auto o = std::make_shared<Opts>();
  CLI::App* r = app.add_subcommand(
      "record", "Identify the rig, run a test plan and store each step as a run of the motor");
  r->add_option("--port", o->port, "Serial device of the rig (or a rig-sim --link path)")->required();
  r->add_option("--motor", o->rec.motor_label, "Motor label (must exist)")->required();
  r->add_option("--plan", o->rec.plan, "standard (locked pulses, 2+ spin-ups, coast-downs) or quick");
  r->add_flag("--yes,-y", o->rec.assume_yes, "No prompts; steps that need hands are skipped");
  r->add_flag("--shaft-held", o->rec.shaft_held,
              "Confirm that the shaft is clamped for the locked-rotor pulses (needed with --yes)");
  r->add_flag("--no-locked", o->rec.skip_locked, "Leave out the locked-rotor pulses");
  r->add_option("--levels", o->rec.levels, "Spin-up output fractions, e.g. 0.5,1")->delimiter(',');
  r->add_option("--locked-levels", o->rec.locked_levels, "Locked-rotor output fractions, e.g. 0.15,0.3")
      ->delimiter(',');
  r->add_option("--locked-positions", o->rec.locked_positions, "Rotor positions for locked pulses (default 3)");
  r->add_option("--current-limit", o->rec.current_limit_A, "Host current limit [A] (default 4)");
  r->add_option("--max-locked", o->rec.max_locked_s, "Longest locked-rotor pulse [s] (default 0.5)");
  r->add_option("--supply-volts", o->rec.supply_volts,
                "Bench supply setting [V] (default: what the rig reports)");
  r->add_option("--spinup-timeout", o->rec.spinup_timeout_s, "Give up waiting for steady speed [s]");
  r->add_option("--coast-timeout", o->rec.coast_timeout_s, "Give up waiting for the shaft to stop [s]");
  r->add_option("--ambient", o->rec.ambient_C, "Ambient (winding) temperature [°C]");
  r->add_option("--supply-note", o->rec.supply_note, "Free text about the supply");
  r->add_option("--ambient-note", o->rec.ambient_note, "Free text about the surroundings");
  r->add_option("--baud", o->baud, "Baud rate for UART rigs (ignored by USB and PTYs)");
  r->add_option("--spec", o->spec,
                "After the last run: fit the runs just recorded, store the fit and print the verdict "
                "against this spec (see docs/qa-spec.md)");
  r->add_option("--rule", o->rule, "Decision rule for --spec: guard-band (default) or simple");
  r->callback([&ctx, o] {
    ctx.action = [&ctx, o]() -> Status {
      RB_RETURN_IF_ERROR(acquire::ValidateRecordOptions(o->rec));
      std::optional<qa::Spec> spec;
      qa::CheckOptions check_options;
      if (!o->spec.empty()) {  // a bad spec is refused before the motor turns
        Result<qa::Spec> sp = qa::LoadSpec(o->spec);
        if (!sp.ok()) return sp.status();
        spec = std::move(*sp);
        Result<qa::DecisionRule> rule = qa::ParseRule(o->rule);
        if (!rule.ok()) return rule.status().WithPrefix("--rule");
        check_options.rule = *rule;
      }
      storage::OpenOptions oo;
      oo.synchronous_full = true;  // a logger: each commit survives a power cut
      Result<storage::Database> db = storage::Database::Open(ctx.db_path, oo);
      if (!db.ok()) return db.status();
      if (Result<storage::Motor> m = db->FindMotor(o->rec.motor_label); !m.ok()) {
        return m.status().WithPrefix("--motor " + o->rec.motor_label);
      }
      acquire::PortOptions po;
      po.baud = o->baud;
      Result<std::unique_ptr<acquire::ByteSource>> port = acquire::OpenPort(o->port, po);
      if (!port.ok()) return port.status().WithPrefix("--port");
      PrintDriveCautions(o->rec.current_limit_A, o->rec.max_locked_s);
      if (!o->rec.assume_yes && !AskYesNo("Go on?")) return Status::Interrupted("not started");
      const bool tty = ::isatty(2);
      acquire::RecordCallbacks cb;
      cb.stop = InstallStopHandlers();
      cb.confirm = AskYesNo;
      cb.say = [tty](const std::string& s) {
        std::fprintf(stderr, "%s%s\n", tty ? "\r\033[K" : "", s.c_str());
      };
      if (tty) {
        cb.live = [](const acquire::LiveStatus& s) {
          std::fprintf(stderr, "\r\033[K%-22s %7.0f rpm %7.3f A %6.2f V %6.0f samples/s  lost %llu  bad %llu",
                       s.step.c_str(), s.rpm, s.amps, s.volts, s.samples_per_s,
                       static_cast<unsigned long long>(s.frames_lost),
                       static_cast<unsigned long long>(s.bad_frames));
          std::fflush(stderr);
        };
      }
      Result<acquire::RecordSummary> sum = acquire::Record(*db, **port, o->rec, cb);
      if (tty) std::fprintf(stderr, "\r\033[K");
      if (!sum.ok()) return sum.status();
      for (const std::string& sk : sum->skipped) fmt::print("skipped: {}\n", sk);
      fmt::print("recorded {} runs of {} on {}\n", sum->runs.size(), o->rec.motor_label, sum->rig.instrument);
      for (const auto& run : sum->runs) {
        fmt::print("  run {:>4}  {:<10} {:<16} {:>7} samples {:>7.3f} s  {}\n", run.id,
                   model::RunKindName(run.kind), run.step, run.samples, run.duration_s, run.end_reason);
      }
      const acquire::DecoderCounters& c = sum->counters;
      fmt::print("link: {} frames, {} lost in {} gaps, {} bad CRC, {} truncated, {} malformed, {} garbage bytes\n",
                 c.frames, c.frames_lost, c.seq_gaps, c.bad_crc, c.truncated, c.malformed, c.garbage_bytes);
      if (sum->interrupted) return Status::Interrupted("stopped by the user; output off, open run kept as interrupted");
      if (!sum->stopped.empty()) return Status::FailedPrecondition("plan stopped: " + sum->stopped);
      if (!spec) return Status::Ok();
      return FitAndCheck(*db, o->rec.motor_label, *sum, *spec, check_options);
    };
  });

  // ---- calibrate zero | shunt | tach
  CLI::App* cal = app.add_subcommand(
      "calibrate", "Bench checks that calibrate the rig's channels, stored for every later run");
  cal->require_subcommand(1);
  struct CalOpts {
    std::string port;
    acquire::CalibrateOptions c;
    bool yes = false;
  };
  auto add_check = [&ctx, cal](const std::string& name, const std::string& help) {
    auto co = std::make_shared<CalOpts>();
    co->c.check = name;
    CLI::App* sc = cal->add_subcommand(name, help);
    sc->add_option("--port", co->port, "Serial device of the rig")->required();
    sc->add_option("--seconds", co->c.seconds, "Averaging time per point [s] (default 1)");
    sc->add_option("--notes", co->c.notes, "Free text stored with the record");
    sc->add_flag("--yes,-y", co->yes, "No prompts (the setup is in place)");
    if (name == "shunt") {
      sc->add_option("--ohms", co->c.ohms, "The precision resistor in place of the motor [ohm]")->required();
      sc->add_option("--tolerance", co->c.ohms_tolerance, "Its tolerance, relative (default 0.001 = 0.1 %)");
      sc->add_option("--levels", co->c.levels, "Output fractions (default 0.3,0.6,1)")->delimiter(',');
      sc->add_option("--current-limit", co->c.current_limit_A, "Host current limit [A] (default 4)");
    }
    if (name == "tach") {
      sc->add_option("--reference-rpm", co->c.reference_rpm, "Speed shown by the reference instrument [rpm]")
          ->required();
      sc->add_option("--reference-u", co->c.reference_u, "Its standard uncertainty, relative (default 0.001)");
      sc->add_option("--level", co->c.level, "Output fraction while measuring (default 1)");
      sc->add_option("--current-limit", co->c.current_limit_A, "Host current limit [A] (default 4)");
    }
    sc->callback([&ctx, co] {
      ctx.action = [&ctx, co]() -> Status {
        RB_RETURN_IF_ERROR(acquire::ValidateCalibrateOptions(co->c));
        Result<storage::Database> db = ctx.OpenDb(true);
        if (!db.ok()) return db.status();
        Result<std::unique_ptr<acquire::ByteSource>> port = acquire::OpenPort(co->port);
        if (!port.ok()) return port.status().WithPrefix("--port");
        const std::string setup =
            co->c.check == "zero"    ? "Leave the motor (or nothing) connected; the output stays off."
            : co->c.check == "shunt" ? "Connect the precision resistor in place of the motor."
                                     : "Mount the motor and aim the reference tachometer at the shaft.";
        if (co->c.check != "zero") PrintDriveCautions(co->c.current_limit_A, 0);
        std::fprintf(stderr, "%s\n", setup.c_str());
        if (!co->yes && !AskYesNo("Ready?")) return Status::Interrupted("not started");
        acquire::CalibrateCallbacks cb;
        cb.stop = InstallStopHandlers();
        cb.say = [](const std::string& line) { std::fprintf(stderr, "%s\n", line.c_str()); };
        Result<acquire::CalibrateSummary> sum = acquire::Calibrate(*db, **port, co->c, cb);
        if (!sum.ok()) return sum.status();
        for (const auto& r : sum->stored) {
          fmt::print("stored calibration {}: {} {} gain {} ± {:.3g} %, offset {} ± {} ({})\n", r.id,
                     r.instrument, r.channel, Num(r.gain, 6), r.gain_u * 100, Num(r.offset, 4),
                     Num(r.offset_u, 2), r.method);
        }
        return Status::Ok();
      };
    });
  };
  add_check("zero", "Current offset with the output off");
  add_check("shunt", "Current gain and offset with a precision resistor in place of the motor");
  add_check("tach", "Speed gain against a reference speed (strobe, optical tachometer)");

}

}  // namespace rb::cli
