// Logging set-up for the solver library (glog, through Ceres).
#include <glog/logging.h>

#include "fit/fit.h"

namespace rb::fit {

void InitLogging(const char* argv0) {
  // Solver messages go to stderr (never to log files in /tmp), and only errors: the fitter
  // reports what matters in its own words (diagnostics). InitGoogleLogging aborts when
  // called twice, hence the guard.
  FLAGS_logtostderr = true;
  FLAGS_minloglevel = google::GLOG_ERROR;
  if (!google::IsGoogleLoggingInitialized()) google::InitGoogleLogging(argv0 ? argv0 : "rotorbench");
}

}  // namespace rb::fit
