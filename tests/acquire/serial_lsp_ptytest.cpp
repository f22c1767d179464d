// The libserialport backend itself, over a pseudo-terminal (rb_serial_tests, with the
// static libserialport and the test-only ioctl shim). Checks the traps the backend
// exists for: every byte value passes (XON/XOFF off after open), frames decode, a closed
// master reads as "vanished" instead of endless zero-byte reads, and that detection does
// not spin a core.
#include <doctest/doctest.h>
#include <fcntl.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <termios.h>
#include <unistd.h>

#include <chrono>
#include <string>

#include "acquire/byte_source.h"
#include "acquire/decoder.h"

using namespace rb;
using namespace rb::acquire;

namespace {

struct Pty {
  int master = -1;
  std::string link;
  Pty() {
    master = posix_openpt(O_RDWR | O_NOCTTY);
    REQUIRE(master >= 0);
    REQUIRE(grantpt(master) == 0);
    REQUIRE(unlockpt(master) == 0);
    char tmpl[] = "/tmp/rb-lsp-XXXXXX";
    REQUIRE(mkdtemp(tmpl) != nullptr);
    link = std::string(tmpl) + "/port";
    REQUIRE(symlink(ptsname(master), link.c_str()) == 0);
    // Turn IXON on for the slave first: a fresh tty commonly has it, and the backend must
    // switch it off itself.
    const int s = open(ptsname(master), O_RDWR | O_NOCTTY);
    termios t{};
    tcgetattr(s, &t);
    t.c_iflag |= IXON | IXOFF;
    tcsetattr(s, TCSANOW, &t);
    close(s);
  }
  ~Pty() {
    if (master >= 0) close(master);
    unlink(link.c_str());
    rmdir(link.substr(0, link.rfind('/')).c_str());
  }
  /// libserialport accepts only names under /dev/ with a node under /sys/class/tty/; this
  /// path resolves to our absolute symlink from both places.
  std::string LspName() const { return "/dev/../../.." + link; }
};

double CpuSeconds() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return u.ru_utime.tv_sec + u.ru_stime.tv_sec + (u.ru_utime.tv_usec + u.ru_stime.tv_usec) * 1e-6;
}

}  // namespace

TEST_CASE("libserialport backend on a PTY: all 256 byte values pass and frames decode") {
  Pty pty;
  Result<std::unique_ptr<ByteSource>> port = OpenLibserialportPort(pty.LspName(), PortOptions{});
  REQUIRE_MESSAGE(port.ok(), port.status().message());
  std::vector<std::uint8_t> all(256);
  for (int k = 0; k < 256; ++k) all[static_cast<std::size_t>(k)] = static_cast<std::uint8_t>(k);
  REQUIRE(write(pty.master, all.data(), all.size()) == 256);
  std::vector<std::uint8_t> got;
  std::uint8_t buf[512];
  for (int k = 0; k < 50 && got.size() < 256; ++k) {
    Result<std::size_t> n = (*port)->Read(buf, 100);
    REQUIRE(n.ok());
    got.insert(got.end(), buf, buf + *n);
  }
  CHECK(got == all);  // 0x11 and 0x13 included: XON/XOFF is off

  // Frames in, decoded; and a host command out through the same port.
  std::vector<std::uint8_t> wire;
  for (int s = 0; s < 20; ++s) EncodeFrame(static_cast<std::uint16_t>(s), 1000u * s, PingCmd{0x13111311u}, &wire);
  REQUIRE(write(pty.master, wire.data(), wire.size()) == static_cast<ssize_t>(wire.size()));
  int frames = 0;
  FrameDecoder dec([&](const Frame& f, std::int64_t) {
    frames += std::get<PingCmd>(f.msg).token == 0x13111311u;
  });
  for (int k = 0; k < 50 && frames < 20; ++k) {
    Result<std::size_t> n = (*port)->Read(buf, 100);
    REQUIRE(n.ok());
    dec.Feed({buf, *n});
  }
  CHECK(frames == 20);
  std::vector<std::uint8_t> cmd;
  EncodeFrame(7, 0, SetOutputCmd{0x1311}, &cmd);
  REQUIRE((*port)->Write(cmd, 500).ok());
  std::vector<std::uint8_t> back(cmd.size());
  std::size_t have = 0;
  for (int k = 0; k < 50 && have < cmd.size(); ++k) {
    const ssize_t n = read(pty.master, back.data() + have, back.size() - have);
    if (n > 0) have += static_cast<std::size_t>(n);
  }
  CHECK(back == cmd);
}

TEST_CASE("libserialport backend: a vanished device is reported, without spinning a core") {
  Pty pty;
  Result<std::unique_ptr<ByteSource>> port = OpenLibserialportPort(pty.LspName(), PortOptions{});
  REQUIRE_MESSAGE(port.ok(), port.status().message());
  std::uint8_t buf[64];
  // Quiet but present: 0 bytes, no error, and the wait really waits (not a busy loop).
  const double cpu0 = CpuSeconds();
  const auto t0 = std::chrono::steady_clock::now();
  Result<std::size_t> n = (*port)->Read(buf, 200);
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  REQUIRE(n.ok());
  CHECK(*n == 0);
  CHECK(wall >= 0.15);
  CHECK(CpuSeconds() - cpu0 < 0.05);  // asleep, not spinning
  // The cable is pulled: the master closes.
  close(pty.master);
  pty.master = -1;
  const double cpu1 = CpuSeconds();
  Status gone;
  for (int k = 0; k < 10 && gone.ok(); ++k) gone = (*port)->Read(buf, 200).status();
  CHECK(gone.code() == Code::kIOError);
  CHECK(gone.message().find("vanished") != std::string::npos);
  CHECK(CpuSeconds() - cpu1 < 0.1);
}
