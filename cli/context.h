// rotorbench cli: state shared by the subcommands of one invocation.
//
// The CLI is thin: it parses (CLI11), calls a module, and prints. Handlers return a
// Status; main() alone turns it into "rotorbench: error: ..." and an exit code.
#pragma once

#include <functional>
#include <string>

#include "base/status.h"
#include "storage/storage.h"

namespace CLI {
class App;
}

namespace rb::cli {

enum ExitCode : int { kExitOk = 0, kExitError = 1, kExitUsage = 2, kExitInterrupted = 130 };

struct Context {
  std::string db_path = "rotorbench.db";  ///< --db, or $ROTORBENCH_DB
  std::function<Status()> action;         ///< set by the chosen subcommand's callback

  /// Opens the database; write commands create it when missing.
  Result<storage::Database> OpenDb(bool write) const;
};

/// Registers one group of subcommands. Each lives in its own cmd_*.cpp.
void AddMotorCommands(CLI::App& app, Context& ctx);
void AddRunCommands(CLI::App& app, Context& ctx);     // import, run list/show, export
void AddSimulateCommand(CLI::App& app, Context& ctx);
void AddRigSimCommand(CLI::App& app, Context& ctx);     // rig-sim
void AddRecordCommands(CLI::App& app, Context& ctx);    // record, calibrate
void AddDaemonCommands(CLI::App& app, Context& ctx);    // daemon, bench, status
void AddRewindCommands(CLI::App& app, Context& ctx);  // rewind plan/suggest/verify/show/wires
void AddQaCommands(CLI::App& app, Context& ctx);  // qa spec | check | batch | plan
void AddReportCommands(CLI::App& app, Context& ctx);  // report, curves
void AddFitCommands(CLI::App& app, Context& ctx);     // fit, fit list, fit show

}  // namespace rb::cli
