// The libserialport backend of ByteSource (real serial devices).
//
// Traps handled here (docs: ../shared toolchain notes, libserialport 0.1.1):
//  * sp_open keeps the tty's previous XON/XOFF setting, which eats 0x11/0x13 from a
//    binary stream: baud, bits, parity, stop bits and flow control are all set after open.
//  * a vanished device reads as "no data", and the select()-based blocking reads spin a
//    core until their timeout; we wait with sp_wait (poll-based) + sp_nonblocking_read
//    and, after any 0-byte read, ask sp_input_waiting(), which fails when it is gone.
// This file is linked against the shared libserialport by the program, and against the
// static one (with a test-only ioctl shim) by tests/acquire/serial_lsp_ptytest.cpp.
#include <libserialport.h>

#include <chrono>

#include "acquire/byte_source.h"

namespace rb::acquire {
namespace {

std::string LastError(const std::string& path, const char* what) {
  char* msg = sp_last_error_message();
  std::string s = path + ": " + what + ": " + (msg ? msg : "unknown error");
  if (msg) sp_free_error_message(msg);
  return s;
}

class LibserialportPort : public ByteSource {
 public:
  LibserialportPort(sp_port* port, sp_event_set* rx, sp_event_set* tx, std::string name)
      : port_(port), rx_(rx), tx_(tx), name_(std::move(name)) {}
  ~LibserialportPort() override {
    sp_free_event_set(rx_);
    sp_free_event_set(tx_);
    sp_close(port_);
    sp_free_port(port_);
  }

  Result<std::size_t> Read(std::span<std::uint8_t> buf, int timeout_ms) override {
    // timeout 0 means "forever" to sp_wait; never pass it.
    if (sp_wait(rx_, static_cast<unsigned>(timeout_ms > 0 ? timeout_ms : 1)) != SP_OK) {
      return Status::IOError(LastError(name_, "wait"));
    }
    const int n = sp_nonblocking_read(port_, buf.data(), buf.size());
    if (n > 0) return static_cast<std::size_t>(n);
    if (n < 0) return Status::IOError(LastError(name_, "read"));
    if (sp_input_waiting(port_) < 0) {
      return Status::IOError(name_ + ": device vanished (input queue unreadable)");
    }
    return std::size_t{0};
  }

  Status Write(std::span<const std::uint8_t> bytes, int timeout_ms) override {
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::milliseconds(timeout_ms);
    std::size_t done = 0;
    while (done < bytes.size()) {
      const int n = sp_nonblocking_write(port_, bytes.data() + done, bytes.size() - done);
      if (n < 0) return Status::IOError(LastError(name_, "write"));
      done += static_cast<std::size_t>(n);
      if (done == bytes.size()) break;
      const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(
                            deadline - std::chrono::steady_clock::now())
                            .count();
      if (left <= 0) return Status::IOError(name_ + ": write timed out; the device takes no input");
      if (sp_wait(tx_, static_cast<unsigned>(left)) != SP_OK) {
        return Status::IOError(LastError(name_, "wait"));
      }
    }
    return Status::Ok();
  }

  void DiscardInput() override { sp_flush(port_, SP_BUF_INPUT); }
  const std::string& name() const override { return name_; }

 private:
  sp_port* port_;
  sp_event_set* rx_;
  sp_event_set* tx_;
  std::string name_;
};

}  // namespace

Result<std::unique_ptr<ByteSource>> OpenLibserialportPort(const std::string& path,
                                                          const PortOptions& options) {
  sp_port* port = nullptr;
  if (sp_get_port_by_name(path.c_str(), &port) != SP_OK) {
    return Status::NotFound(LastError(path, "not a serial port libserialport knows"));
  }
  auto fail = [&](const char* what) -> Status {
    Status s = Status::IOError(LastError(path, what));
    sp_close(port);
    sp_free_port(port);
    return s;
  };
  if (sp_open(port, SP_MODE_READ_WRITE) != SP_OK) {
    Status s = Status::IOError(LastError(path, "cannot open"));
    sp_free_port(port);
    return s;
  }
  if (sp_set_baudrate(port, options.baud) != SP_OK) return fail("cannot set baud rate");
  if (sp_set_bits(port, 8) != SP_OK) return fail("cannot set 8 data bits");
  if (sp_set_parity(port, SP_PARITY_NONE) != SP_OK) return fail("cannot set no parity");
  if (sp_set_stopbits(port, 1) != SP_OK) return fail("cannot set 1 stop bit");
  if (sp_set_flowcontrol(port, SP_FLOWCONTROL_NONE) != SP_OK) return fail("cannot turn flow control off");
  // USB CDC devices commonly wait for DTR before they send.
  if (sp_set_dtr(port, SP_DTR_ON) != SP_OK) return fail("cannot raise DTR");
  sp_flush(port, SP_BUF_INPUT);
  sp_event_set* rx = nullptr;
  sp_event_set* tx = nullptr;
  if (sp_new_event_set(&rx) != SP_OK || sp_add_port_events(rx, port, SP_EVENT_RX_READY) != SP_OK ||
      sp_new_event_set(&tx) != SP_OK || sp_add_port_events(tx, port, SP_EVENT_TX_READY) != SP_OK) {
    if (rx) sp_free_event_set(rx);
    if (tx) sp_free_event_set(tx);
    return fail("cannot set up waiting");
  }
  return std::unique_ptr<ByteSource>(new LibserialportPort(port, rx, tx, path));
}

}  // namespace rb::acquire
