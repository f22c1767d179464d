// rotorbench simulate — write what the bench instruments would record for one run.
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <fstream>
#include <memory>

#include "acquire/csv_import.h"
#include "cli/context.h"
#include "model/model.h"

namespace rb::cli {

void AddSimulateCommand(CLI::App& app, Context& ctx) {
  struct Opts {
    std::string kind = "spinup";
    double volts = 6.0;
    double duration = 0;  // 0 = kind default
    std::uint64_t seed = 1;
    std::string out;
    std::optional<double> resistance, kv, inertia_gcm2, friction_mnm, gain_error;
    double rotor_angle_deg = 0;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* s = app.add_subcommand(
      "simulate", "Simulate one run of the demo motor (or a variant) and write it as CSV");
  s->add_option("--kind", o->kind, "spinup, coastdown, locked, steady or loaded");
  s->add_option("--volts", o->volts, "Supply voltage [V]");
  s->add_option("--duration", o->duration, "Logged seconds after the step (default by kind)");
  s->add_option("--seed", o->seed, "Random seed (same seed, same file)");
  s->add_option("--out", o->out, "CSV file to write (default: standard output)");
  s->add_option("--resistance", o->resistance, "Armature resistance [ohm]");
  s->add_option("--kv", o->kv, "Speed constant [rpm/V]");
  s->add_option("--inertia", o->inertia_gcm2, "Rotor inertia [g·cm²]");
  s->add_option("--friction", o->friction_mnm, "Coulomb friction torque [mN·m]");
  s->add_option("--current-gain-error", o->gain_error, "Current sensor gain error (0.01 = +1 %)");
  s->add_option("--rotor-angle", o->rotor_angle_deg, "Locked rotor: shaft angle [degrees]");
  s->callback([&ctx, o] {
    ctx.action = [o]() -> Status {
      const std::optional<model::RunKind> kind = model::RunKindFromName(o->kind);
      if (!kind) {
        return Status::InvalidArgument(fmt::format("--kind {}: unknown run kind; expected one of {}",
                                                   o->kind, model::RunKindList()));
      }
      model::BenchModel bench = model::DemoBench(o->seed);
      if (o->resistance) bench.motor.R = *o->resistance;
      if (o->kv) bench.motor.Ke = units::KvRpmPerVoltToKe(*o->kv);
      if (o->inertia_gcm2) bench.motor.J = units::GCm2ToKgM2(*o->inertia_gcm2);
      if (o->friction_mnm) bench.motor.Tc = units::MilliNmToNm(*o->friction_mnm);
      if (o->gain_error) bench.instruments.current.gain_error = *o->gain_error;
      model::RunScript script;
      script.kind = *kind;
      script.volts = o->volts;
      script.rotor_angle = o->rotor_angle_deg * units::kPi / 180.0;
      script.duration_s = o->duration > 0 ? o->duration
                          : *kind == model::RunKind::kLocked    ? 0.2
                          : *kind == model::RunKind::kCoastDown ? 20.0
                                                                : 0.6;
      Result<model::SimulatedRun> run = model::SimulateRun(bench, script);
      if (!run.ok()) return run.status().WithPrefix("--kind " + o->kind);
      const std::string csv = acquire::SamplesToCsv(run->samples);
      if (o->out.empty()) {
        std::fwrite(csv.data(), 1, csv.size(), stdout);
        return Status::Ok();
      }
      std::ofstream f(o->out, std::ios::binary | std::ios::trunc);
      if (!f || !f.write(csv.data(), static_cast<std::streamsize>(csv.size()))) {
        return Status::IOError(o->out + ": cannot write");
      }
      fmt::print("wrote {} samples of a simulated {} run at {} V to {}\n", run->samples.size(),
                 o->kind, o->volts, o->out);
      return Status::Ok();
    };
  });
  (void)ctx;
}

}  // namespace rb::cli
