#include "acquire/sim_runner.h"

#include <fcntl.h>
#include <poll.h>
#include <stdlib.h>
#include <termios.h>
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <memory>
#include <thread>
#include <vector>

namespace rb::acquire {
namespace {

constexpr std::size_t kMaxPending = 64 * 1024;  // the "transmit buffer" of the device

/// One PTY pair with a symlink to its slave. The slave stays open here so that the
/// master never sees a hang-up (and never spins in poll) while no host is attached.
class PtyLink {
 public:
  ~PtyLink() { Close(); }

  Status Open(const std::string& link) {
    link_ = link;
    master_ = ::posix_openpt(O_RDWR | O_NOCTTY | O_NONBLOCK | O_CLOEXEC);
    if (master_ < 0) return Status::IOError(std::string("posix_openpt: ") + std::strerror(errno));
    if (::grantpt(master_) != 0 || ::unlockpt(master_) != 0) {
      return Status::IOError(std::string("unlockpt: ") + std::strerror(errno));
    }
    const char* name = ::ptsname(master_);
    if (!name) return Status::IOError("ptsname failed");
    device_ = name;
    slave_ = ::open(name, O_RDWR | O_NOCTTY | O_NONBLOCK | O_CLOEXEC);
    if (slave_ < 0) return Status::IOError(device_ + ": " + std::strerror(errno));
    termios t{};
    ::tcgetattr(slave_, &t);
    ::cfmakeraw(&t);  // no echo (the host's commands must not come back to us), no XON/XOFF
    ::tcsetattr(slave_, TCSANOW, &t);
    // Replace the link atomically: a symlink under a temporary name, renamed over it.
    const std::string tmp = link + ".tmp" + std::to_string(::getpid());
    ::unlink(tmp.c_str());
    if (::symlink(device_.c_str(), tmp.c_str()) != 0 || ::rename(tmp.c_str(), link.c_str()) != 0) {
      Status s = Status::IOError(link + ": cannot create the link: " + std::strerror(errno));
      ::unlink(tmp.c_str());
      return s;
    }
    return Status::Ok();
  }

  void Close() {
    if (master_ < 0) return;
    char target[256] = {0};
    const ssize_t n = ::readlink(link_.c_str(), target, sizeof target - 1);
    if (n > 0 && device_ == std::string(target, static_cast<std::size_t>(n))) ::unlink(link_.c_str());
    ::close(slave_);
    ::close(master_);
    master_ = slave_ = -1;
    pending_.clear();
  }

  bool open() const { return master_ >= 0; }
  int fd() const { return master_; }
  const std::string& device() const { return device_; }

  /// Queues bytes; false when the buffer is full (they were not taken).
  bool Queue(const std::string& s) {
    if (pending_.size() + s.size() > kMaxPending) return false;
    pending_.insert(pending_.end(), s.begin(), s.end());
    return true;
  }
  void Queue(const std::vector<std::uint8_t>& b) { pending_.insert(pending_.end(), b.begin(), b.end()); }
  bool full() const { return pending_.size() > kMaxPending; }

  void Flush() {
    while (!pending_.empty()) {
      const ssize_t n = ::write(master_, pending_.data(), pending_.size());
      if (n <= 0) return;  // EAGAIN: the PTY buffer is full; the rest waits
      pending_.erase(pending_.begin(), pending_.begin() + n);
    }
  }

  /// Reads host bytes (non-blocking).
  std::size_t Read(std::uint8_t* buf, std::size_t n) {
    const ssize_t r = ::read(master_, buf, n);
    return r > 0 ? static_cast<std::size_t>(r) : 0;
  }

 private:
  std::string link_, device_;
  int master_ = -1, slave_ = -1;
  std::vector<std::uint8_t> pending_;
};

}  // namespace

Status RunSimulator(const SimRigOptions& rig, const SimRunnerOptions& run,
                    const volatile std::sig_atomic_t* stop,
                    const std::function<void(const std::string&)>& say) {
  SimFirmware fw(rig);
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> log(nullptr, &std::fclose);
  if (!run.emission_log.empty()) {
    log.reset(std::fopen(run.emission_log.c_str(), "w"));
    if (!log) return Status::IOError(run.emission_log + ": cannot write: " + std::strerror(errno));
    fw.SetEmissionLog(log.get());
  }
  fw.EnableText(!run.tach_link.empty(), !run.meter_link.empty());

  PtyLink rig_link, tach_link, meter_link;
  auto open_rig = [&]() -> Status {
    if (run.link.empty()) return Status::Ok();
    RB_RETURN_IF_ERROR(rig_link.Open(run.link));
    say("rig-sim: " + rig_link.device() + " linked at " + run.link);
    return Status::Ok();
  };
  RB_RETURN_IF_ERROR(open_rig());
  if (!run.tach_link.empty()) {
    RB_RETURN_IF_ERROR(tach_link.Open(run.tach_link));
    say("rig-sim: text tach on " + tach_link.device() + " linked at " + run.tach_link);
  }
  if (!run.meter_link.empty()) {
    RB_RETURN_IF_ERROR(meter_link.Open(run.meter_link));
    say("rig-sim: text meter on " + meter_link.device() + " linked at " + run.meter_link);
  }

  using Clock = std::chrono::steady_clock;
  const auto start = Clock::now();
  if (log) {  // the device clock's origin on CLOCK_MONOTONIC (steady_clock on Linux)
    std::fprintf(log.get(), "C,%lld,%lld\n", static_cast<long long>(rig.clock_start_us),
                 static_cast<long long>(
                     std::chrono::duration_cast<std::chrono::nanoseconds>(start.time_since_epoch()).count()));
  }
  auto elapsed = [&] { return std::chrono::duration<double>(Clock::now() - start).count(); };
  double back_at = -1;  // while unplugged: when the cable goes back in (< 0 = never)
  bool unplugged = false, vanish_done = false, stall_done = false;
  double next_log_flush = 0.1;
  std::uint8_t buf[4096];

  while (!*stop) {
    const double now = elapsed();
    if (run.max_seconds > 0 && now >= run.max_seconds) break;
    if (!vanish_done && run.vanish_at_s >= 0 && now >= run.vanish_at_s) {
      vanish_done = true;
      fw.InjectFault({proto::kFaultVanish, static_cast<std::uint32_t>(run.vanish_for_s * 1000)});
    }
    if (!stall_done && run.stall_at_s >= 0 && now >= run.stall_at_s) {
      stall_done = true;
      fw.InjectFault({proto::kFaultStall, static_cast<std::uint32_t>(run.stall_for_s * 1000)});
    }

    fw.AdvanceTo(now);
    if (auto vanish = fw.TakeVanishRequest(); vanish && rig_link.open()) {
      rig_link.Close();
      unplugged = true;
      back_at = *vanish > 0 ? now + *vanish : -1;
      say("rig-sim: unplugged " + run.link + (back_at > 0 ? "" : " for good"));
    }
    if (unplugged && back_at >= 0 && now >= back_at) {
      unplugged = false;
      fw.Reset();  // the rig lost power with the cable
      RB_RETURN_IF_ERROR(open_rig());
    }

    if (rig_link.open()) {
      for (std::size_t n; (n = rig_link.Read(buf, sizeof buf)) > 0;) fw.Receive({buf, n});
      rig_link.Queue(fw.TakeOutput());
      rig_link.Flush();
      fw.SetLinkFull(rig_link.full());
    } else {
      fw.TakeOutput();  // nobody to send to
      fw.SetLinkFull(true);
    }
    if (tach_link.open()) {
      tach_link.Queue(fw.TakeTachLines(run.text_rate_hz));
      tach_link.Flush();
    }
    if (meter_link.open()) {
      meter_link.Queue(fw.TakeMeterLines(run.text_rate_hz));
      meter_link.Flush();
    }
    if (log && now >= next_log_flush) {
      std::fflush(log.get());
      next_log_flush = now + 0.1;
    }

    // Sleep until host bytes arrive or 2 ms pass (the pacing step).
    pollfd p{rig_link.open() ? rig_link.fd() : -1, POLLIN, 0};
    ::poll(&p, 1, 2);
  }
  return Status::Ok();
}

}  // namespace rb::acquire
