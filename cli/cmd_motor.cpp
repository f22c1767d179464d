// rotorbench motor add | list | show
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <map>
#include <memory>

#include "cli/context.h"
#include "cli/output.h"
#include "model/params.h"

namespace rb::cli {
namespace {

using nlohmann::json;

json MotorJson(const storage::Motor& m) {
  return {{"id", m.id}, {"label", m.label}, {"batch", m.batch}, {"notes", m.notes},
          {"created_utc", m.created_utc}};
}

}  // namespace

json RunJson(const storage::Run& r);  // cmd_run.cpp

void AddMotorCommands(CLI::App& app, Context& ctx) {
  CLI::App* motor = app.add_subcommand("motor", "Add, list and show motors");
  motor->require_subcommand(1);

  struct AddOpts {
    std::string label, batch, note;
  };
  auto add = std::make_shared<AddOpts>();
  CLI::App* a = motor->add_subcommand("add", "Add a motor (the label is unique)");
  a->add_option("LABEL", add->label, "Label written on or stuck to the motor")->required();
  a->add_option("--batch", add->batch, "Batch or lot the motor belongs to");
  a->add_option("--note", add->note, "Free-text note");
  a->callback([&ctx, add] {
    ctx.action = [&ctx, add]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(true);
      if (!db.ok()) return db.status();
      Result<std::int64_t> id = db->AddMotor(add->label, add->batch, add->note);
      if (!id.ok()) return id.status();
      fmt::print("added motor '{}' (id {}) to {}\n", add->label, *id, ctx.db_path);
      return Status::Ok();
    };
  });

  struct ListOpts {
    std::string batch;
    bool json = false;
  };
  auto list = std::make_shared<ListOpts>();
  CLI::App* l = motor->add_subcommand("list", "List motors with their run and fit counts");
  l->add_option("--batch", list->batch, "Only motors of this batch");
  l->add_flag("--json", list->json, "Machine-readable output");
  l->callback([&ctx, list] {
    ctx.action = [&ctx, list]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<std::vector<storage::Motor>> motors = db->ListMotors(list->batch);
      if (!motors.ok()) return motors.status();
      Result<std::vector<storage::Run>> runs = db->ListRuns();
      if (!runs.ok()) return runs.status();
      Result<std::vector<storage::FitRecord>> fits = db->ListFits();
      if (!fits.ok()) return fits.status();
      std::map<std::int64_t, int> run_count, fit_count;
      for (const auto& r : *runs) ++run_count[r.motor_id];
      for (const auto& f : *fits) ++fit_count[f.motor_id];
      if (list->json) {
        json arr = json::array();
        for (const auto& m : *motors) {
          json j = MotorJson(m);
          j["runs"] = run_count[m.id];
          j["fits"] = fit_count[m.id];
          arr.push_back(j);
        }
        PrintJson(arr);
        return Status::Ok();
      }
      Table t({"label", "batch", "runs", "fits", "added (UTC)", "notes"});
      for (const auto& m : *motors) {
        t.Row({m.label, m.batch, std::to_string(run_count[m.id]), std::to_string(fit_count[m.id]),
               m.created_utc.substr(0, 19), m.notes});
      }
      if (t.empty()) {
        fmt::print("no motors in {}; add one with `rotorbench motor add LABEL`\n", ctx.db_path);
      } else {
        t.Print();
      }
      return Status::Ok();
    };
  });

  struct ShowOpts {
    std::string label;
    bool json = false;
  };
  auto show = std::make_shared<ShowOpts>();
  CLI::App* s = motor->add_subcommand("show", "Show one motor with its runs and fits");
  s->add_option("LABEL", show->label, "Motor label")->required();
  s->add_flag("--json", show->json, "Machine-readable output");
  s->callback([&ctx, show] {
    ctx.action = [&ctx, show]() -> Status {
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<storage::Motor> m = db->FindMotor(show->label);
      if (!m.ok()) return m.status();
      Result<std::vector<storage::Run>> runs = db->ListRuns(m->id);
      if (!runs.ok()) return runs.status();
      Result<std::vector<storage::FitRecord>> fits = db->ListFits(m->id);
      if (!fits.ok()) return fits.status();
      if (show->json) {
        json j = MotorJson(*m);
        j["runs"] = json::array();
        for (const auto& r : *runs) j["runs"].push_back(RunJson(r));
        j["fits"] = json::array();
        for (const auto& f : *fits) {
          j["fits"].push_back({{"id", f.id}, {"created_utc", f.created_utc}, {"model", f.model},
                               {"runs", f.run_ids}});
        }
        PrintJson(j);
        return Status::Ok();
      }
      fmt::print("motor {} (id {})\n  batch: {}\n  notes: {}\n  added: {}\n", m->label, m->id,
                 m->batch.empty() ? "-" : m->batch, m->notes.empty() ? "-" : m->notes,
                 m->created_utc);
      fmt::print("\nruns: {}\n", runs->size());
      if (!runs->empty()) {
        Table t({"run", "kind", "status", "samples", "duration s", "started (UTC)", "source"});
        for (const auto& r : *runs) {
          t.Row({std::to_string(r.id), std::string(model::RunKindName(r.kind)),
                 std::string(storage::RunStatusName(r.status)), std::to_string(r.sample_count),
                 Num(r.duration_s, 4), r.started_utc.substr(0, 19), r.source});
        }
        t.Print();
      }
      fmt::print("\nfits: {}\n", fits->size());
      if (!fits->empty()) {
        Table t({"fit", "model", "runs", "created (UTC)"});
        for (const auto& f : *fits) {
          t.Row({std::to_string(f.id), f.model, std::to_string(f.run_ids.size()),
                 f.created_utc.substr(0, 19)});
        }
        t.Print();
      }
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
