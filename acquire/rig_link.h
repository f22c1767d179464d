// rotorbench acquire: the host side of one rig on the rig link protocol.
//
// RigLink owns a decoder on a ByteSource: it identifies the rig, sends commands and
// waits for their ACKs without losing the data that arrives meanwhile, and turns
// SAMPLES into readings in SI with the rig's own scales (raw: rotorbench calibration is
// applied later, when runs are read). Times are the device clock, unwrapped, in µs.
// Not thread-safe: one thread drives a RigLink.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "acquire/byte_source.h"
#include "acquire/codec.h"
#include "acquire/decoder.h"

namespace rb::acquire {

/// What the rig said about itself, in SI.
struct RigInfo {
  IdentifyMsg ident;
  std::string instrument;  ///< "NAME#SERIAL": the key of its calibration records
  double adc_rate_hz = 0;
  double tach_resolution_s = 0;
  double supply_volts = 0;  ///< 0 = the rig does not know
  bool simulated = false;
  bool pwm = false;
};

struct AdcReading {
  std::int64_t t_us;  ///< device time, unwrapped
  double current;     ///< A, with the rig's scale and offset
  double voltage;     ///< V
};

struct RigEvent {
  std::int64_t t_us;
  EventMsg msg;
};

/// Everything decoded since the last TakeData().
struct RigData {
  std::vector<AdcReading> adc;
  std::vector<std::int64_t> marks_us;
  std::vector<RigEvent> events;
  std::vector<std::string> logs;  ///< "warning: text"
  std::optional<StatusMsg> status;
};

class RigLink {
 public:
  explicit RigLink(ByteSource* port);

  /// HELLO until IDENTIFY arrives (tries × timeout). Fails naming the port.
  Result<RigInfo> Identify(int timeout_ms = 600, int tries = 3);
  const std::optional<RigInfo>& info() const { return info_; }

  /// Sends a command; returns its sequence number.
  Result<std::uint16_t> Send(const Message& cmd);
  /// Sends and waits for its ACK (data arriving meanwhile is kept). Fails when no ACK
  /// comes or the rig answers anything but OK; the message names the command.
  Result<AckMsg> Command(const Message& cmd, int timeout_ms = 500);
  Status SetOutput(std::uint16_t level, int timeout_ms = 500) {
    return Command(SetOutputCmd{level}, timeout_ms).status();
  }
  Status Stream(bool on) { return Command(StreamCmd{on}).status(); }

  /// Reads once (waiting up to timeout_ms) and decodes what came.
  /// IOError when the port vanished.
  Status Poll(int timeout_ms);
  RigData TakeData();

  DecoderCounters counters() { return decoder_.counters(); }
  const std::string& last_error() const { return decoder_.last_error(); }
  ByteSource* port() const { return port_; }
  std::uint64_t bytes_read() const { return bytes_read_; }

 private:
  void OnFrame(const Frame& f, std::int64_t t_us);

  ByteSource* port_;
  FrameDecoder decoder_;
  std::optional<RigInfo> info_;
  RigData data_;
  std::map<std::uint16_t, AckMsg> acks_;
  std::uint16_t next_seq_ = 0;
  std::uint64_t bytes_read_ = 0;
  std::vector<std::uint8_t> buf_;
};

/// The rig's level value for a fraction 0..1 of full output.
std::uint16_t LevelFor(const RigInfo& info, double fraction);

}  // namespace rb::acquire
