#include "cli/signals.h"

namespace rb::cli {
namespace {
volatile std::sig_atomic_t g_stop = 0;
volatile std::sig_atomic_t g_signal = 0;
extern "C" void OnStopSignal(int sig) {
  g_stop = 1;
  g_signal = sig;
}
}  // namespace

const volatile std::sig_atomic_t* InstallStopHandlers() {
  struct sigaction sa {};
  sa.sa_handler = OnStopSignal;
  sigemptyset(&sa.sa_mask);
  sa.sa_flags = 0;  // no SA_RESTART: blocking calls return EINTR and the loop looks at the flag
  sigaction(SIGINT, &sa, nullptr);
  sigaction(SIGTERM, &sa, nullptr);
  std::signal(SIGPIPE, SIG_IGN);
  return &g_stop;
}

int StopSignal() { return g_signal; }

}  // namespace rb::cli
