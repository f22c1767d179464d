// rotorbench tests: shared helpers — temporary directories, running the real binary.
#pragma once

#include <string>
#include <vector>

namespace rb::testing {

/// A fresh directory under $TMPDIR, removed with its contents on destruction.
class TempDir {
 public:
  enum Where { kTmpDir, kPreferRamDisk };
  /// kTmpDir: under $TMPDIR (or /tmp); kPreferRamDisk: under /dev/shm when it exists.
  explicit TempDir(Where where = kTmpDir);
  ~TempDir();
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::string& path() const { return path_; }
  std::string File(const std::string& name) const { return path_ + "/" + name; }

 private:
  std::string path_;
};

struct CommandResult {
  int exit_code = -1;
  std::string out, err;
};

/// Runs the rotorbench binary with `args` (no shell), capturing both streams.
CommandResult RunRotorbench(const std::vector<std::string>& args);

/// Runs any program (argv[0] found on PATH) and captures both streams.
CommandResult RunProgram(const std::vector<std::string>& argv);

void WriteFile(const std::string& path, const std::string& text);
std::string ReadFile(const std::string& path);

/// Path of a file in fixtures/.
std::string Fixture(const std::string& name);

/// True in the long test tier (`scripts/stress` sets ROTORBENCH_STRESS=1): tests that try
/// to break the promises run with large counts there and small ones by default.
bool LongTier();

}  // namespace rb::testing
