// End to end: rig-sim → pseudo-terminal → daemon → SQLite. Reports the samples/s stored
// with zero loss at given ADC rates (baseline: the rate the simulated rig produced, so
// the ratio is the fraction kept), and the daemon's CPU share of one core at 1 000
// samples/s (baseline: the simulated rig's own share in the same window). Not a test.
//   build/bench/acquire_e2e_bench [SECONDS] [RATE...]      (defaults: 8 s; 20000 50000)
#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "bench/bench_util.h"
#include "storage/storage.h"

extern char** environ;

namespace {

std::string Bin() {
  if (const char* b = std::getenv("ROTORBENCH_BIN")) return b;
  return ROTORBENCH_BIN_DEFAULT;
}

pid_t Spawn(const std::vector<std::string>& args, const std::string& log) {
  posix_spawn_file_actions_t fa;
  posix_spawn_file_actions_init(&fa);
  posix_spawn_file_actions_addopen(&fa, 1, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_adddup2(&fa, 1, 2);
  std::vector<char*> argv;
  for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  pid_t pid = -1;
  posix_spawn(&pid, argv[0], &fa, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&fa);
  return pid;
}

void Stop(pid_t pid) {
  kill(pid, SIGTERM);
  int st = 0;
  waitpid(pid, &st, 0);
}

bool WaitPath(const std::string& p) {
  struct stat st {};
  for (int k = 0; k < 250; ++k) {
    if (stat(p.c_str(), &st) == 0) return true;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return false;
}

/// utime + stime of a process [s].
double CpuOf(pid_t pid) {
  std::ifstream f("/proc/" + std::to_string(pid) + "/stat");
  std::string s((std::istreambuf_iterator<char>(f)), std::istreambuf_iterator<char>());
  std::istringstream in(s.substr(s.rfind(')') + 2));
  std::string field;
  double ut = 0, st = 0;
  for (int k = 3; k <= 15 && in >> field; ++k) {
    if (k == 14) ut = std::stod(field);
    if (k == 15) st = std::stod(field);
  }
  return (ut + st) / static_cast<double>(sysconf(_SC_CLK_TCK));
}

struct Pass {
  double stored_per_s = 0;   // ADC samples stored per second of run time
  std::size_t stored = 0, off_grid = 0;
  double daemon_cpu = 0, sim_cpu = 0;  // shares of one core in the measuring window
};

Pass RunOnce(double rate, double seconds, bool measure_cpu) {
  char tmpl[] = "/tmp/rb-e2e-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  const std::string db = dir + "/b.db", link = dir + "/rig", sock = dir + "/ctl.sock";
  {
    auto d = rb::storage::Database::Open(db);
    d->AddMotor("B1", "", "").ok();
  }
  std::ofstream(dir + "/d.toml") << "socket = \"" << sock << "\"\nmotor = \"B1\"\n[[port]]\npath = \"" << link
                                  << "\"\nprotocol = \"rig\"\n";
  // Output on from 0.5 s for longer than the test: one spin-up, then steady runs.
  const pid_t sim = Spawn({Bin(), "rig-sim", "--link", link, "--adc-rate", std::to_string(rate), "--auto-cycle",
                           "1000,1", "--max-seconds", std::to_string(seconds + 10)},
                          dir + "/sim.log");
  WaitPath(link);
  const pid_t daemon = Spawn({Bin(), "--db", db, "daemon", "--config", dir + "/d.toml"}, dir + "/daemon.log");
  WaitPath(sock);
  Pass p;
  std::this_thread::sleep_for(std::chrono::duration<double>(std::min(2.0, seconds / 3)));
  const double c0 = CpuOf(daemon), s0 = CpuOf(sim);
  const auto t0 = std::chrono::steady_clock::now();
  std::this_thread::sleep_for(std::chrono::duration<double>(seconds - std::min(2.0, seconds / 3)));
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  if (measure_cpu) {
    p.daemon_cpu = (CpuOf(daemon) - c0) / wall;
    p.sim_cpu = (CpuOf(sim) - s0) / wall;
  }
  Stop(daemon);
  Stop(sim);
  auto d = rb::storage::Database::Open(db);
  double dur = 0;
  const double grid_us = 1e6 / rate;
  const auto runs = d->ListRuns();
  if (!runs.ok()) return p;
  for (const auto& r : *runs) {
    const auto s = d->ReadSamples(r.id);
    if (!s.ok()) continue;
    double prev = NAN, first = NAN, last = NAN;
    for (const auto& x : *s) {
      if (std::isnan(x.current)) continue;
      if (!std::isnan(prev) && std::fabs((x.t - prev) * 1e6 - grid_us) > 1.0) ++p.off_grid;
      if (std::isnan(first)) first = x.t;
      last = prev = x.t;
      ++p.stored;
    }
    if (!std::isnan(first)) dur += last - first + 1.0 / rate;
  }
  p.stored_per_s = dur > 0 ? static_cast<double>(p.stored) / dur : 0;
  if (std::system(("rm -rf " + dir).c_str()) != 0) std::fprintf(stderr, "could not remove %s\n", dir.c_str());
  return p;
}

}  // namespace

int main(int argc, char** argv) {
  const double seconds = argc > 1 ? std::atof(argv[1]) : 5.0;
  std::vector<double> rates;
  for (int k = 2; k < argc; ++k) rates.push_back(std::atof(argv[k]));
  if (rates.empty()) rates = {5000, 10000, 20000, 40000, 80000};
  rb::bench::PrintMethod(
      "rig-sim (real-time paced) -> PTY -> rotorbench daemon -> SQLite; rates tried in "
      "increasing order until the first loss, per rate 3 passes of SECONDS; 'stored/s' = "
      "current readings stored per second of run time; 'off-grid' = consecutive stored "
      "readings not exactly one ADC period apart (+-1 us), i.e. losses; CPU = "
      "(utime+stime)/wall of the process over the measuring window");
  double best_rate = 0;
  rb::bench::Stats best{};
  for (double rate : rates) {
    std::vector<double> per_s;
    std::size_t off = 0, stored = 0;
    for (int r = 0; r < 3; ++r) {
      Pass p = RunOnce(rate, seconds, false);
      per_s.push_back(p.stored_per_s);
      off += p.off_grid;
      stored += p.stored;
    }
    const auto s = rb::bench::Summarise(per_s);
    std::printf("rate %6.0f/s: stored %8.0f samples/s median (%.0f-%.0f), baseline produced %6.0f/s, ratio %.4f, "
                "%zu stored, %zu off-grid\n",
                rate, s.median, s.min, s.max, rate, s.median / rate, stored, off);
    std::fflush(stdout);
    if (off > 0 || stored == 0) break;  // the first loss
    best_rate = rate;
    best = s;
  }
  rb::bench::PrintRow({"3. end to end: highest loss-free rate tried", "3 × " + rb::bench::Num(seconds) + " s",
                       best, "samples/s stored", "rate rig-sim produced",
                       {best_rate, best_rate, best_rate}, "≥ 20,000/s", best_rate >= 20000});
  std::vector<double> dcpu, scpu;
  for (int r = 0; r < 3; ++r) {
    Pass p = RunOnce(1000, seconds, true);
    dcpu.push_back(p.daemon_cpu * 100);
    scpu.push_back(p.sim_cpu * 100);
  }
  const auto d = rb::bench::Summarise(dcpu), s = rb::bench::Summarise(scpu);
  std::printf("1000 samples/s: daemon CPU %.2f %% of one core median (%.2f-%.2f); baseline rig-sim %.2f %% (%.2f-%.2f); "
              "ratio %.2f\n",
              d.median, d.min, d.max, s.median, s.min, s.max, s.median > 0 ? d.median / s.median : 0.0);
  rb::bench::PrintRow({"3. daemon CPU at 1,000 samples/s", "3 × " + rb::bench::Num(seconds) + " s", d,
                       "% of one core", "rig-sim process", s, "≤ 5 %", d.median <= 5});
  return 0;
}
