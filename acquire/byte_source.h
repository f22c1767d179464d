// rotorbench acquire: serial ports behind one narrow interface.
//
// A ByteSource reads and writes bytes with timeouts and tells a vanished device (cable
// pulled, PTY master closed) from a quiet one: Read() returns 0 for "nothing came" and an
// IOError for "the device is gone". OpenPort() picks the backend: plain termios for
// pseudo-terminals (libserialport refuses them), libserialport for real devices (every
// port parameter set explicitly after opening: 8N1, no flow control, so no XON/XOFF
// byte is eaten). ScriptedByteSource is the fake for unit tests. A ByteSource is used by
// one thread at a time.
#pragma once

#include <cstdint>
#include <deque>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "base/status.h"

namespace rb::acquire {

class ByteSource {
 public:
  virtual ~ByteSource() = default;
  /// Waits up to timeout_ms for input, then reads what is there (at most buf.size()).
  /// 0 = nothing arrived; IOError = the device vanished (close and reopen it).
  virtual Result<std::size_t> Read(std::span<std::uint8_t> buf, int timeout_ms) = 0;
  /// Writes all bytes, waiting up to timeout_ms; IOError when the device vanished or
  /// would not take them.
  virtual Status Write(std::span<const std::uint8_t> bytes, int timeout_ms) = 0;
  /// Discards input the OS has buffered (stale bytes from before we opened).
  virtual void DiscardInput() {}
  /// The path it was opened with, for messages.
  virtual const std::string& name() const = 0;
};

enum class PortBackend { kAuto, kTermios, kLibserialport };

struct PortOptions {
  int baud = 115200;  ///< ignored by pseudo-terminals and USB CDC-ACM devices
  /// kAuto: termios for pseudo-terminals (/dev/pts/N, also through symlinks),
  /// libserialport for everything else.
  PortBackend backend = PortBackend::kAuto;
};

/// Opens a port; the message names the path and the reason.
Result<std::unique_ptr<ByteSource>> OpenPort(const std::string& path, const PortOptions& options = {});
/// Raw termios (pseudo-terminals; also works on ordinary ttys).
Result<std::unique_ptr<ByteSource>> OpenTermiosPort(const std::string& path,
                                                    const PortOptions& options);
/// libserialport (real serial devices; see acquire/serial_libserialport.cpp).
Result<std::unique_ptr<ByteSource>> OpenLibserialportPort(const std::string& path,
                                                          const PortOptions& options);
/// True when `path` (after following symlinks) is a pseudo-terminal slave.
bool IsPseudoTerminal(const std::string& path);

/// A fake port that plays a script: chunks of bytes, silences and a vanish.
class ScriptedByteSource : public ByteSource {
 public:
  explicit ScriptedByteSource(std::string name = "scripted") : name_(std::move(name)) {}
  /// Next Read() returns these bytes (split to the caller's buffer size).
  void AddBytes(std::vector<std::uint8_t> bytes) { script_.push_back({Step::kBytes, std::move(bytes)}); }
  /// Next Read() returns 0 (a timeout).
  void AddSilence() { script_.push_back({Step::kSilence, {}}); }
  /// Next Read() (and every later one) fails: the device vanished.
  void AddVanish() { script_.push_back({Step::kVanish, {}}); }

  Result<std::size_t> Read(std::span<std::uint8_t> buf, int timeout_ms) override;
  Status Write(std::span<const std::uint8_t> bytes, int timeout_ms) override;
  const std::string& name() const override { return name_; }
  /// Everything written so far.
  const std::vector<std::uint8_t>& written() const { return written_; }

 private:
  struct Step {
    enum Kind { kBytes, kSilence, kVanish } kind;
    std::vector<std::uint8_t> bytes;
  };
  std::string name_;
  std::deque<Step> script_;
  std::vector<std::uint8_t> written_;
  bool vanished_ = false;
};

}  // namespace rb::acquire
