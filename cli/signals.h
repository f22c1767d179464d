// rotorbench cli: SIGINT/SIGTERM as a flag that long-running commands poll.
#pragma once

#include <csignal>

namespace rb::cli {

/// Installs handlers for SIGINT and SIGTERM (and ignores SIGPIPE); returns the flag they
/// set. The signal number that came last is in *StopSignal().
const volatile std::sig_atomic_t* InstallStopHandlers();
int StopSignal();

}  // namespace rb::cli
