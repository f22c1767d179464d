// rotorbench: one binary, subcommands registered by group (cli/cmd_*.cpp).
#include <CLI/CLI.hpp>

#include <cstdio>
#include <cstdlib>

#include "base/version.h"
#include "cli/context.h"
#include "fit/fit.h"

namespace rb::cli {

Result<storage::Database> Context::OpenDb(bool write) const {
  storage::OpenOptions o;
  o.create_if_missing = write;
  return storage::Database::Open(db_path, o);
}

namespace {

int ExitCodeFor(const Status& s) {
  if (s.ok()) return kExitOk;
  if (s.code() == Code::kInterrupted) return kExitInterrupted;
  return kExitError;
}

int Main(int argc, char** argv) {
  fit::InitLogging(argc > 0 ? argv[0] : "rotorbench");  // once, before any solver runs
  Context ctx;
  if (const char* env = std::getenv("ROTORBENCH_DB"); env && *env) ctx.db_path = env;

  CLI::App app{
      "rotorbench — measure a small brushed DC motor on the bench, fit its constants, and "
      "use them (curves, reports, rewinds, batch acceptance).",
      "rotorbench"};
  app.set_version_flag("--version", std::string("rotorbench ") + kVersion);
  app.add_option("--db", ctx.db_path,
                 "Database file (default: $ROTORBENCH_DB, else rotorbench.db here)");
  app.require_subcommand(1);
  app.fallthrough();
  app.failure_message([](const CLI::App*, const CLI::Error& e) {
    return std::string("rotorbench: error: ") + e.what() + " (see --help)\n";
  });

  AddMotorCommands(app, ctx);
  AddRunCommands(app, ctx);
  AddSimulateCommand(app, ctx);
  AddRigSimCommand(app, ctx);
  AddRecordCommands(app, ctx);
  AddDaemonCommands(app, ctx);
  AddRewindCommands(app, ctx);
  AddQaCommands(app, ctx);
  AddReportCommands(app, ctx);
  AddFitCommands(app, ctx);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int rc = app.exit(e);
    return rc == 0 ? kExitOk : kExitUsage;
  }
  if (!ctx.action) return kExitUsage;
  Status s;
  try {
    s = ctx.action();
  } catch (const std::exception& e) {  // library exceptions that escaped a module edge
    s = Status(Code::kIOError, std::string("unexpected failure: ") + e.what());
  }
  std::fflush(stdout);
  if (!s.ok()) std::fprintf(stderr, "rotorbench: error: %s\n", s.message().c_str());
  return ExitCodeFor(s);
}

}  // namespace
}  // namespace rb::cli

int main(int argc, char** argv) { return rb::cli::Main(argc, argv); }
