// Fuzz target: the logging daemon's TOML config, read from a file as in production (an
// in-memory file). Either a config, or a one-line error naming the file.
#include <sys/mman.h>
#include <unistd.h>

#include <cstdint>
#include <string>

#include "acquire/daemon.h"
#include "fuzz/fuzz_util.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const int fd = memfd_create("fuzz-config", 0);
  if (fd < 0) return 0;
  if (size > 0 && write(fd, data, size) != static_cast<ssize_t>(size)) {
    close(fd);
    return 0;
  }
  const std::string path = "/proc/self/fd/" + std::to_string(fd);
  auto cfg = rb::acquire::LoadDaemonConfig(path);
  if (!cfg.ok()) rb::fuzz::CheckOneLineError(cfg.status().message(), path);
  close(fd);
  return 0;
}
