// Port selection, the termios backend, and the scripted fake.
#include "acquire/byte_source.h"

#include <fcntl.h>
#include <poll.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <termios.h>
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cstring>

namespace rb::acquire {
namespace {

std::string Errno(const std::string& path, const char* what) {
  return path + ": " + what + ": " + std::strerror(errno);
}

speed_t BaudConstant(int baud) {
  switch (baud) {
    case 9600: return B9600;
    case 19200: return B19200;
    case 38400: return B38400;
    case 57600: return B57600;
    case 115200: return B115200;
    case 230400: return B230400;
    case 460800: return B460800;
    case 921600: return B921600;
    default: return 0;
  }
}

class TermiosPort : public ByteSource {
 public:
  TermiosPort(int fd, std::string name) : fd_(fd), name_(std::move(name)) {}
  ~TermiosPort() override { ::close(fd_); }

  Result<std::size_t> Read(std::span<std::uint8_t> buf, int timeout_ms) override {
    pollfd p{fd_, POLLIN, 0};
    const int r = ::poll(&p, 1, timeout_ms);
    if (r < 0) {
      if (errno == EINTR) return std::size_t{0};
      return Status::IOError(Errno(name_, "poll"));
    }
    if (r == 0) return std::size_t{0};
    const ssize_t n = ::read(fd_, buf.data(), buf.size());
    if (n > 0) return static_cast<std::size_t>(n);
    if (n < 0 && (errno == EAGAIN || errno == EINTR)) return std::size_t{0};
    // Readable but nothing to read (EOF), EIO, or a hang-up: the other end is gone.
    return Status::IOError(name_ + ": device vanished (" +
                           (n == 0 ? std::string("end of file") : std::string(std::strerror(errno))) +
                           ")");
  }

  Status Write(std::span<const std::uint8_t> bytes, int timeout_ms) override {
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::milliseconds(timeout_ms);
    std::size_t done = 0;
    while (done < bytes.size()) {
      const ssize_t n = ::write(fd_, bytes.data() + done, bytes.size() - done);
      if (n > 0) {
        done += static_cast<std::size_t>(n);
        continue;
      }
      if (n < 0 && errno != EAGAIN && errno != EINTR) {
        return Status::IOError(Errno(name_, "write"));
      }
      const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(
                            deadline - std::chrono::steady_clock::now())
                            .count();
      if (left <= 0) return Status::IOError(name_ + ": write timed out; the device takes no input");
      pollfd p{fd_, POLLOUT, 0};
      if (::poll(&p, 1, static_cast<int>(left)) > 0 && (p.revents & (POLLHUP | POLLERR))) {
        return Status::IOError(name_ + ": device vanished while writing");
      }
    }
    return Status::Ok();
  }

  void DiscardInput() override { ::tcflush(fd_, TCIFLUSH); }
  const std::string& name() const override { return name_; }

 private:
  int fd_;
  std::string name_;
};

}  // namespace

bool IsPseudoTerminal(const std::string& path) {
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0 || !S_ISCHR(st.st_mode)) return false;
  const unsigned maj = major(st.st_rdev);
  return maj >= 136 && maj <= 143;  // Unix98 PTY slaves (Linux devices.txt)
}

Result<std::unique_ptr<ByteSource>> OpenTermiosPort(const std::string& path,
                                                    const PortOptions& options) {
  const int fd = ::open(path.c_str(), O_RDWR | O_NOCTTY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) return Status::IOError(Errno(path, "cannot open"));
  termios t{};
  if (::tcgetattr(fd, &t) != 0) {
    Status s = Status::IOError(Errno(path, "not a terminal device"));
    ::close(fd);
    return s;
  }
  ::cfmakeraw(&t);  // no echo, no line editing, no CR/LF mapping, no XON/XOFF
  t.c_iflag &= ~static_cast<tcflag_t>(IXON | IXOFF | IXANY);
  t.c_cflag |= CLOCAL | CREAD;
  t.c_cflag &= ~static_cast<tcflag_t>(CSTOPB | PARENB | CRTSCTS);
  t.c_cc[VMIN] = 0;
  t.c_cc[VTIME] = 0;
  if (const speed_t sp = BaudConstant(options.baud)) {
    ::cfsetispeed(&t, sp);
    ::cfsetospeed(&t, sp);
  }
  if (::tcsetattr(fd, TCSANOW, &t) != 0) {
    Status s = Status::IOError(Errno(path, "cannot set raw mode"));
    ::close(fd);
    return s;
  }
  ::tcflush(fd, TCIFLUSH);
  return std::unique_ptr<ByteSource>(new TermiosPort(fd, path));
}

Result<std::unique_ptr<ByteSource>> OpenPort(const std::string& path, const PortOptions& options) {
  switch (options.backend) {
    case PortBackend::kTermios: return OpenTermiosPort(path, options);
    case PortBackend::kLibserialport: return OpenLibserialportPort(path, options);
    case PortBackend::kAuto: break;
  }
  if (IsPseudoTerminal(path)) return OpenTermiosPort(path, options);
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) {
    return Status::NotFound(path + ": no such port; expected a serial device such as "
                            "/dev/ttyACM0 (or a rig-sim --link path)");
  }
  return OpenLibserialportPort(path, options);
}

Result<std::size_t> ScriptedByteSource::Read(std::span<std::uint8_t> buf, int timeout_ms) {
  (void)timeout_ms;
  if (vanished_) return Status::IOError(name_ + ": device vanished (scripted)");
  if (script_.empty()) return std::size_t{0};
  Step& s = script_.front();
  switch (s.kind) {
    case Step::kSilence:
      script_.pop_front();
      return std::size_t{0};
    case Step::kVanish:
      vanished_ = true;
      return Status::IOError(name_ + ": device vanished (scripted)");
    case Step::kBytes: {
      const std::size_t n = std::min(buf.size(), s.bytes.size());
      std::memcpy(buf.data(), s.bytes.data(), n);
      s.bytes.erase(s.bytes.begin(), s.bytes.begin() + static_cast<std::ptrdiff_t>(n));
      if (s.bytes.empty()) script_.pop_front();
      return n;
    }
  }
  return std::size_t{0};
}

Status ScriptedByteSource::Write(std::span<const std::uint8_t> bytes, int timeout_ms) {
  (void)timeout_ms;
  if (vanished_) return Status::IOError(name_ + ": device vanished (scripted)");
  written_.insert(written_.end(), bytes.begin(), bytes.end());
  return Status::Ok();
}

}  // namespace rb::acquire
