// rotorbench qa spec | check | batch | plan — acceptance of incoming motors.
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <cstdio>
#include <memory>

#include "cli/context.h"
#include "cli/output.h"
#include "qa/qa.h"
#if ROTORBENCH_QA_HTML
#include "qa/html.h"
#endif

namespace rb::cli {
namespace {

struct RuleOpts {
  std::string rule = "guard-band";
  double k = 2.0;
};

void AddRuleOptions(CLI::App* c, RuleOpts* r) {
  c->add_option("--rule", r->rule,
                "Decision rule: guard-band (uncertainty-aware, ISO 14253-1 style; default) or "
                "simple (inside the limits)");
  c->add_option("--k", r->k, "Coverage factor for the expanded uncertainty U = k·u (default 2)")
      ->check(CLI::PositiveNumber);
}

Result<qa::CheckOptions> CheckOptionsFrom(const RuleOpts& r) {
  Result<qa::DecisionRule> rule = qa::ParseRule(r.rule);
  if (!rule.ok()) return rule.status();
  qa::CheckOptions o;
  o.rule = *rule;
  o.coverage_factor = r.k;
  return o;
}

void AddSpecCommand(CLI::App* qa, Context& ctx) {
  struct Opts {
    std::string file;
    bool json = false;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* c = qa->add_subcommand("spec", "Check a spec file and show its limits");
  c->add_option("FILE", o->file, "Spec file (TOML; see docs/qa-spec.md)")->required();
  c->add_flag("--json", o->json, "Machine-readable output");
  c->callback([&ctx, o] {
    ctx.action = [o]() -> Status {
      Result<qa::Spec> spec = qa::LoadSpec(o->file);
      if (!spec.ok()) return spec.status();
      if (o->json) {
        nlohmann::json limits = nlohmann::json::array();
        for (const qa::Limit& l : spec->limits) {
          limits.push_back({{"key", std::string(qa::Info(l.quantity).key)},
                            {"label", l.Label()},
                            {"unit", l.unit},
                            {"lower", l.lower ? JsonNum(l.ToUnit(*l.lower)) : nullptr},
                            {"upper", l.upper ? JsonNum(l.ToUnit(*l.upper)) : nullptr},
                            {"nominal", l.nominal ? JsonNum(l.ToUnit(*l.nominal)) : nullptr},
                            {"tolerance", l.tolerance},
                            {"line", l.line}});
        }
        PrintJson({{"name", spec->name},
                   {"format_version", spec->format_version},
                   {"accept_number", spec->accept_number},
                   {"limits", limits}});
        return Status::Ok();
      }
      fmt::print("{}: \"{}\" (spec format {}), {} quantities, batch accept number {}\n\n", o->file,
                 spec->name, spec->format_version, spec->limits.size(), spec->accept_number);
      Table t({"line", "quantity", "unit", "nominal", "tolerance", "limits"});
      for (const qa::Limit& l : spec->limits) {
        t.Row({std::to_string(l.line), l.Label(), l.unit,
               l.nominal ? Num(l.ToUnit(*l.nominal), 6) : "-", l.tolerance, qa::FormatLimits(l)});
      }
      t.Print();
      return Status::Ok();
    };
  });
}

void AddCheckCommand(CLI::App* qa, Context& ctx) {
  struct Opts {
    std::string spec, motor;
    RuleOpts rule;
    bool json = false;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* c = qa->add_subcommand(
      "check", "Check one motor's latest fit against a spec: measured ± U, limits, verdict");
  c->add_option("--spec", o->spec, "Spec file (TOML; see docs/qa-spec.md)")->required();
  c->add_option("--motor", o->motor, "Motor label")->required();
  AddRuleOptions(c, &o->rule);
  c->add_flag("--json", o->json, "Machine-readable output");
  c->callback([&ctx, o] {
    ctx.action = [&ctx, o]() -> Status {
      Result<qa::Spec> spec = qa::LoadSpec(o->spec);
      if (!spec.ok()) return spec.status();
      Result<qa::CheckOptions> opts = CheckOptionsFrom(o->rule);
      if (!opts.ok()) return opts.status();
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<qa::MotorCheck> check = qa::CheckMotor(*db, o->motor, *spec, *opts);
      if (!check.ok()) return check.status();
      if (o->json) {
        PrintJson(qa::CheckJson(*check));
      } else {
        std::fputs(qa::FormatCheck(*check).c_str(), stdout);
      }
      return Status::Ok();
    };
  });
}

void AddBatchCommand(CLI::App* qa, Context& ctx) {
  struct Opts {
    std::string spec, batch, format = "table";
    RuleOpts rule;
    double alpha = 0.05;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* c = qa->add_subcommand(
      "batch", "Check every motor of a batch: one row per motor, statistics, batch verdict");
  c->add_option("--spec", o->spec, "Spec file (TOML; see docs/qa-spec.md)")->required();
  c->add_option("--batch", o->batch, "Batch name (as given to motor add --batch)")->required();
#if ROTORBENCH_QA_HTML
  c->add_option("--format", o->format,
                "table (default), csv, json, or html (a page with a histogram per quantity)")
      ->check(CLI::IsMember({"table", "csv", "json", "html"}));
#else
  c->add_option("--format", o->format, "table (default), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
#endif
  c->add_option("--outlier-alpha", o->alpha, "Significance of the outlier test (default 0.05)")
      ->check(CLI::Range(1e-6, 0.5));
  AddRuleOptions(c, &o->rule);
  c->callback([&ctx, o] {
    ctx.action = [&ctx, o]() -> Status {
      Result<qa::Spec> spec = qa::LoadSpec(o->spec);
      if (!spec.ok()) return spec.status();
      Result<qa::CheckOptions> check = CheckOptionsFrom(o->rule);
      if (!check.ok()) return check.status();
      qa::BatchOptions opts;
      opts.check = *check;
      opts.outlier_alpha = o->alpha;
      Result<storage::Database> db = ctx.OpenDb(false);
      if (!db.ok()) return db.status();
      Result<qa::BatchSummary> b = qa::CheckBatch(*db, o->batch, *spec, opts);
      if (!b.ok()) return b.status();
      if (o->format == "json") {
        PrintJson(qa::BatchJson(*b));
#if ROTORBENCH_QA_HTML
      } else if (o->format == "html") {
        std::fputs(qa::BatchHtml(*b).c_str(), stdout);
#endif
      } else if (o->format == "csv") {
        std::fputs(qa::FormatBatchCsv(*b).c_str(), stdout);
      } else {
        std::fputs(qa::FormatBatchTable(*b).c_str(), stdout);
      }
      return Status::Ok();
    };
  });
}

void AddPlanCommand(CLI::App* qa, Context& ctx) {
  struct Opts {
    std::int64_t lot = 0;
    double aql = 0, ltpd = 0, alpha = 0.05, beta = 0.10;
    bool json = false, html = false;
  };
  auto o = std::make_shared<Opts>();
  CLI::App* c = qa->add_subcommand(
      "plan", "The smallest single sampling plan (n, c) for a lot, with its OC curve");
  c->add_option("--lot", o->lot, "Lot size N (motors)")->required();
  c->add_option("--aql", o->aql, "Acceptable quality level, percent defective")->required();
  c->add_option("--ltpd", o->ltpd, "Lot tolerance percent defective")->required();
  c->add_option("--alpha", o->alpha, "Producer's risk at the AQL (default 0.05)");
  c->add_option("--beta", o->beta, "Consumer's risk at the LTPD (default 0.10)");
  c->add_flag("--json", o->json, "Machine-readable output");
#if ROTORBENCH_QA_HTML
  c->add_flag("--html", o->html, "An HTML page with the OC curve plotted");
#endif
  c->callback([&ctx, o] {
    ctx.action = [o]() -> Status {
      qa::PlanOptions p;
      p.lot = o->lot;
      p.aql = o->aql / 100.0;
      p.ltpd = o->ltpd / 100.0;
      p.alpha = o->alpha;
      p.beta = o->beta;
      Result<qa::SamplingPlan> plan = qa::FindPlan(p);
      if (!plan.ok()) return plan.status();
      if (o->json) {
        PrintJson(qa::PlanJson(*plan));
#if ROTORBENCH_QA_HTML
      } else if (o->html) {
        std::fputs(qa::PlanHtml(*plan).c_str(), stdout);
#endif
      } else {
        std::fputs(qa::FormatPlan(*plan).c_str(), stdout);
      }
      return Status::Ok();
    };
  });
}

}  // namespace

void AddQaCommands(CLI::App& app, Context& ctx) {
  CLI::App* qa = app.add_subcommand(
      "qa", "Acceptance of incoming motors: specs, verdicts, batch statistics, sampling plans");
  qa->require_subcommand(1);
  AddSpecCommand(qa, ctx);
  AddCheckCommand(qa, ctx);
  AddBatchCommand(qa, ctx);
  AddPlanCommand(qa, ctx);
}

}  // namespace rb::cli
