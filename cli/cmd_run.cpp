// rotorbench import | run list | run show | export
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <cmath>
#include <fstream>
#include <memory>

#include "acquire/csv_import.h"
#include "base/time_util.h"
#include "cli/context.h"
#include "cli/output.h"
#include "model/units.h"

namespace rb::cli {
namespace {

using nlohmann::json;

struct ChannelStats {
  size_t n = 0;
  double min = NAN, max = NAN, sum = 0;
  void Add(double v) {
    if (std::isnan(v)) return;
    if (n == 0 || v < min) min = v;
    if (n == 0 || v > max) max = v;
    sum += v;
    ++n;
  }
  double mean() const { return n ? sum / static_cast<double>(n) : NAN; }
};

Result<storage::Database> OpenForRead(const Context& ctx) { return ctx.OpenDb(false); }

}  // namespace

json RunJson(const storage::Run& r) {
  json j = {{"id", r.id},
            {"motor", r.motor_label},
            {"kind", model::RunKindName(r.kind)},
            {"status", storage::RunStatusName(r.status)},
            {"started_utc", r.started_utc},
            {"ended_utc", r.ended_utc.empty() ? json(nullptr) : json(r.ended_utc)},
            {"source", r.source},
            {"samples", r.sample_count},
            {"duration_s", r.duration_s},
            {"supply_note", r.supply_note},
            {"ambient_note", r.ambient_note},
            {"ambient_C", r.ambient_C ? json(*r.ambient_C) : json(nullptr)},
            {"nominal_voltage_V", r.nominal_voltage ? json(*r.nominal_voltage) : json(nullptr)}};
  json meta = json::parse(r.meta_json, nullptr, /*allow_exceptions=*/false);
  j["meta"] = meta.is_discarded() ? json::object() : meta;
  return j;
}

void AddRunCommands(CLI::App& app, Context& ctx) {
  // ---- import
  struct ImportOpts {
    std::string file, motor, kind, supply_note, ambient_note;
    acquire::CsvImportOptions csv;
    std::string delimiter = ",";
    std::optional<double> nominal_v, ambient_c;
  };
  auto im = std::make_shared<ImportOpts>();
  CLI::App* i = app.add_subcommand("import", "Import one run from a CSV file (one transaction)");
  i->add_option("FILE", im->file, "CSV file; default header time_s,speed_rpm,current_a,voltage_v")
      ->required();
  i->add_option("--motor", im->motor, "Motor label (must exist)")->required();
  i->add_option("--kind", im->kind, std::string("Run kind: ") + model::RunKindList())->required();
  for (auto [name, spec] : {std::pair{"time", &im->csv.time}, std::pair{"speed", &im->csv.speed},
                            std::pair{"current", &im->csv.current},
                            std::pair{"voltage", &im->csv.voltage}}) {
    const std::string n(name);
    i->add_option("--" + n + "-col", spec->header, "Header of the " + n + " column");
    i->add_option("--" + n + "-unit", spec->unit,
                  "Unit of the " + n + " column: " +
                      units::AcceptedUnits(n == "time"      ? units::Quantity::kTime
                                           : n == "speed"   ? units::Quantity::kSpeed
                                           : n == "current" ? units::Quantity::kCurrent
                                                            : units::Quantity::kVoltage));
  }
  i->add_option("--delimiter", im->delimiter, "Field separator (one character; default ,)");
  i->add_option("--supply-volts", im->nominal_v, "Supply setting when voltage was not logged [V]");
  i->add_option("--ambient", im->ambient_c, "Ambient (winding) temperature [°C]");
  i->add_option("--supply-note", im->supply_note, "Free text about the supply");
  i->add_option("--ambient-note", im->ambient_note, "Free text about the surroundings");
  i->callback([&ctx, im] {
    ctx.action = [&ctx, im]() -> Status {
      const std::optional<model::RunKind> kind = model::RunKindFromName(im->kind);
      if (!kind) {
        return Status::InvalidArgument(fmt::format("--kind {}: unknown run kind; expected one of {}",
                                                   im->kind, model::RunKindList()));
      }
      if (im->delimiter.size() != 1) {
        return Status::InvalidArgument("--delimiter '" + im->delimiter +
                                       "': expected exactly one character");
      }
      im->csv.delimiter = im->delimiter[0];
      RB_RETURN_IF_ERROR(acquire::ValidateCsvOptions(im->csv));
      Result<acquire::CsvImportSummary> parsed = acquire::ReadSamplesCsv(im->file, im->csv);
      if (!parsed.ok()) return parsed.status();
      Result<storage::Database> db = ctx.OpenDb(true);
      if (!db.ok()) return db.status();
      Result<storage::Motor> motor = db->FindMotor(im->motor);
      if (!motor.ok()) return motor.status().WithPrefix("--motor " + im->motor);
      storage::NewRun nr;
      nr.motor_id = motor->id;
      nr.kind = *kind;
      nr.started_utc = UtcNowIso();
      nr.source = "import:" + im->file;
      nr.supply_note = im->supply_note;
      nr.ambient_note = im->ambient_note;
      nr.ambient_C = im->ambient_c;
      nr.nominal_voltage = im->nominal_v;
      json cols = json::object();
      for (auto [name, use] : {std::pair{"time", &parsed->time}, std::pair{"speed", &parsed->speed},
                               std::pair{"current", &parsed->current},
                               std::pair{"voltage", &parsed->voltage}}) {
        if (!use->header.empty()) cols[name] = {{"header", use->header}, {"unit", use->unit}};
      }
      nr.meta_json = json{{"import", {{"file", im->file}, {"columns", cols}}}}.dump();
      Result<std::int64_t> id = db->ImportRun(nr, parsed->samples);
      if (!id.ok()) return id.status().WithPrefix(im->file);
      const double dur = parsed->samples.back().t - parsed->samples.front().t;
      fmt::print("imported {} samples ({} speed, {} current, {} voltage readings; {:.3f} s) from "
                 "{} as run {} ({}, motor {})\n",
                 parsed->samples.size(), parsed->speed_readings, parsed->current_readings,
                 parsed->voltage_readings, dur, im->file, *id, im->kind, im->motor);
      return Status::Ok();
    };
  });

  // ---- run list / run show
  CLI::App* run = app.add_subcommand("run", "List and show runs");
  run->require_subcommand(1);
  struct ListOpts {
    std::string motor;
    bool json = false;
  };
  auto lo = std::make_shared<ListOpts>();
  CLI::App* l = run->add_subcommand("list", "List runs, oldest first");
  l->add_option("--motor", lo->motor, "Only runs of this motor");
  l->add_flag("--json", lo->json, "Machine-readable output");
  l->callback([&ctx, lo] {
    ctx.action = [&ctx, lo]() -> Status {
      Result<storage::Database> db = OpenForRead(ctx);
      if (!db.ok()) return db.status();
      std::optional<std::int64_t> motor_id;
      if (!lo->motor.empty()) {
        Result<storage::Motor> m = db->FindMotor(lo->motor);
        if (!m.ok()) return m.status().WithPrefix("--motor " + lo->motor);
        motor_id = m->id;
      }
      Result<std::vector<storage::Run>> runs = db->ListRuns(motor_id);
      if (!runs.ok()) return runs.status();
      if (lo->json) {
        json arr = json::array();
        for (const auto& r : *runs) arr.push_back(RunJson(r));
        PrintJson(arr);
        return Status::Ok();
      }
      Table t({"run", "motor", "kind", "status", "samples", "duration s", "started (UTC)",
               "source"});
      for (const auto& r : *runs) {
        t.Row({std::to_string(r.id), r.motor_label, std::string(model::RunKindName(r.kind)),
               std::string(storage::RunStatusName(r.status)), std::to_string(r.sample_count),
               Num(r.duration_s, 4), r.started_utc.substr(0, 19), r.source});
      }
      if (t.empty()) fmt::print("no runs\n"); else t.Print();
      return Status::Ok();
    };
  });

  struct ShowOpts {
    std::int64_t id = 0;
    bool json = false;
  };
  auto so = std::make_shared<ShowOpts>();
  CLI::App* s = run->add_subcommand("show", "Show a run: details, channel statistics, events");
  s->add_option("ID", so->id, "Run id")->required();
  s->add_flag("--json", so->json, "Machine-readable output");
  s->callback([&ctx, so] {
    ctx.action = [&ctx, so]() -> Status {
      Result<storage::Database> db = OpenForRead(ctx);
      if (!db.ok()) return db.status();
      // One snapshot: the run record and its samples agree while a logger writes.
      RB_RETURN_IF_ERROR(db->BeginRead());
      Result<storage::Run> r = db->GetRun(so->id);
      if (!r.ok()) return r.status();
      Result<std::vector<model::Sample>> samples = db->ReadSamples(so->id);
      if (!samples.ok()) return samples.status();
      Result<std::vector<storage::RunEvent>> events = db->ListEvents(so->id);
      if (!events.ok()) return events.status();
      RB_RETURN_IF_ERROR(db->EndRead());
      ChannelStats sp, cu, vo;
      for (const model::Sample& x : *samples) {
        sp.Add(model::HasSpeed(x) ? units::RadPerSecToRpm(x.speed) : NAN);
        cu.Add(x.current);
        vo.Add(x.voltage);
      }
      if (so->json) {
        json j = RunJson(*r);
        auto st = [](const ChannelStats& c) {
          return json{{"readings", c.n}, {"min", JsonNum(c.min)}, {"max", JsonNum(c.max)},
                      {"mean", JsonNum(c.mean())}};
        };
        j["channels"] = {{"speed_rpm", st(sp)}, {"current_A", st(cu)}, {"voltage_V", st(vo)}};
        j["events"] = json::array();
        for (const auto& e : *events) {
          j["events"].push_back({{"t_s", e.t}, {"kind", e.kind}, {"detail", e.detail}});
        }
        PrintJson(j);
        return Status::Ok();
      }
      fmt::print("run {} — {} of motor {} ({})\n", r->id, model::RunKindName(r->kind),
                 r->motor_label, storage::RunStatusName(r->status));
      fmt::print("  started {}  ended {}\n  source: {}\n", r->started_utc,
                 r->ended_utc.empty() ? "-" : r->ended_utc, r->source);
      if (!r->supply_note.empty()) fmt::print("  supply: {}\n", r->supply_note);
      if (r->nominal_voltage) fmt::print("  supply setting: {} V\n", *r->nominal_voltage);
      if (r->ambient_C) fmt::print("  ambient: {} °C\n", *r->ambient_C);
      if (!r->ambient_note.empty()) fmt::print("  ambient note: {}\n", r->ambient_note);
      fmt::print("  {} samples over {:.3f} s\n\n", r->sample_count, r->duration_s);
      Table t({"channel", "readings", "min", "max", "mean"});
      auto row = [&t](const char* name, const ChannelStats& c) {
        t.Row({name, std::to_string(c.n), Num(c.min, 5), Num(c.max, 5), Num(c.mean(), 5)});
      };
      row("speed [rpm]", sp);
      row("current [A]", cu);
      row("voltage [V]", vo);
      t.Print();
      if (!events->empty()) {
        fmt::print("\nevents:\n");
        for (const auto& e : *events) fmt::print("  {:9.4f} s  {}  {}\n", e.t, e.kind, e.detail);
      }
      return Status::Ok();
    };
  });

  // ---- export
  struct ExportOpts {
    std::int64_t id = 0;
    std::string format = "csv";
    std::string out;
  };
  auto eo = std::make_shared<ExportOpts>();
  CLI::App* e = app.add_subcommand("export", "Export a run's samples as CSV or JSON");
  e->add_option("--run", eo->id, "Run id")->required();
  e->add_option("--format", eo->format, "csv or json")->check(CLI::IsMember({"csv", "json"}));
  e->add_option("--out", eo->out, "Write to this file instead of standard output");
  e->callback([&ctx, eo] {
    ctx.action = [&ctx, eo]() -> Status {
      Result<storage::Database> db = OpenForRead(ctx);
      if (!db.ok()) return db.status();
      // One snapshot: the run record and its samples agree while a logger writes.
      RB_RETURN_IF_ERROR(db->BeginRead());
      Result<storage::Run> r = db->GetRun(eo->id);
      if (!r.ok()) return r.status();
      Result<std::vector<model::Sample>> samples = db->ReadSamples(eo->id);
      if (!samples.ok()) return samples.status();
      RB_RETURN_IF_ERROR(db->EndRead());
      std::string text;
      if (eo->format == "csv") {
        text = acquire::SamplesToCsv(*samples);
      } else {
        json t = json::array(), sp = json::array(), cu = json::array(), vo = json::array();
        for (const model::Sample& x : *samples) {
          t.push_back(x.t);
          const double rpm = model::HasSpeed(x) ? units::RadPerSecToRpm(x.speed) : NAN;
          sp.push_back(JsonNum(RoundSignificant(rpm)));
          cu.push_back(JsonNum(RoundSignificant(x.current)));
          vo.push_back(JsonNum(RoundSignificant(x.voltage)));
        }
        json j = {{"run", RunJson(*r)},
                  {"samples", {{"time_s", t}, {"speed_rpm", sp}, {"current_a", cu},
                               {"voltage_v", vo}}}};
        text = j.dump(1) + "\n";
      }
      if (eo->out.empty()) {
        std::fwrite(text.data(), 1, text.size(), stdout);
        return Status::Ok();
      }
      std::ofstream f(eo->out, std::ios::binary | std::ios::trunc);
      if (!f || !f.write(text.data(), static_cast<std::streamsize>(text.size()))) {
        return Status::IOError(eo->out + ": cannot write");
      }
      fmt::print(stderr, "wrote {} samples of run {} to {}\n", samples->size(), eo->id, eo->out);
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
