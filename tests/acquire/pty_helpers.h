// Tests over real pseudo-terminals: background processes (rig-sim, daemon) and waits.
#pragma once

#include <signal.h>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <fcntl.h>
#include <string>
#include <thread>
#include <vector>

#include "tests/testutil.h"

extern char** environ;

namespace rb::testing {

/// A child process with stdout and stderr sent to a file; killed (SIGTERM, then SIGKILL)
/// when it goes out of scope.
class Child {
 public:
  Child(const std::vector<std::string>& args, const std::string& log_path) {
    posix_spawn_file_actions_t fa;
    posix_spawn_file_actions_init(&fa);
    posix_spawn_file_actions_addopen(&fa, 1, log_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    posix_spawn_file_actions_adddup2(&fa, 1, 2);
    posix_spawn_file_actions_addopen(&fa, 0, "/dev/null", O_RDONLY, 0);
    std::vector<char*> argv;
    for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
    argv.push_back(nullptr);
    if (posix_spawn(&pid_, argv[0], &fa, nullptr, argv.data(), environ) != 0) pid_ = -1;
    posix_spawn_file_actions_destroy(&fa);
  }
  ~Child() {
    if (pid_ > 0 && !done_) {
      ::kill(pid_, SIGTERM);
      for (int k = 0; k < 100 && !Poll(); ++k) std::this_thread::sleep_for(std::chrono::milliseconds(20));
      if (!done_) {
        ::kill(pid_, SIGKILL);
        Wait();
      }
    }
  }
  Child(const Child&) = delete;
  Child& operator=(const Child&) = delete;

  bool started() const { return pid_ > 0; }
  pid_t pid() const { return pid_; }
  void Signal(int sig) { ::kill(pid_, sig); }
  /// True once it has exited (reaps it).
  bool Poll() {
    if (done_) return true;
    int st = 0;
    if (::waitpid(pid_, &st, WNOHANG) == pid_) {
      done_ = true;
      code_ = WIFEXITED(st) ? WEXITSTATUS(st) : 128 + WTERMSIG(st);
    }
    return done_;
  }
  int Wait() {
    if (!done_) {
      int st = 0;
      ::waitpid(pid_, &st, 0);
      done_ = true;
      code_ = WIFEXITED(st) ? WEXITSTATUS(st) : 128 + WTERMSIG(st);
    }
    return code_;
  }
  /// SIGTERM and wait for the exit code.
  int Stop() {
    Signal(SIGTERM);
    return Wait();
  }

 private:
  pid_t pid_ = -1;
  bool done_ = false;
  int code_ = -1;
};

/// Waits until `path` exists (a rig-sim link), up to `seconds`.
inline bool WaitForPath(const std::string& path, double seconds = 5) {
  const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
  struct stat st {};
  while (std::chrono::steady_clock::now() < until) {
    if (::stat(path.c_str(), &st) == 0) return true;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return false;
}

/// Waits until `pred()` holds, up to `seconds`.
template <typename F>
bool WaitUntil(F pred, double seconds) {
  const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
  while (std::chrono::steady_clock::now() < until) {
    if (pred()) return true;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return pred();
}

}  // namespace rb::testing
