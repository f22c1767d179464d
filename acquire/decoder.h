// rotorbench acquire: the streaming frame decoder of the rig link.
//
// Feed() takes bytes as they arrive (any split), finds frames between 0x00 delimiters,
// un-stuffs, checks CRC, version and length, and hands each valid frame to the handler.
// Everything else is counted, never guessed: garbage bytes, bad CRCs, truncated or
// over-long frames, unknown types, sequence gaps (and how many frames they lost) and
// device-clock wraps. A rejected frame yields nothing, so samples are never invented.
// Not thread-safe: one decoder per link, fed from one thread.
#pragma once

#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <vector>

#include "acquire/codec.h"

namespace rb::acquire {

struct DecoderCounters {
  std::uint64_t bytes = 0;          ///< all bytes fed
  std::uint64_t frames = 0;         ///< valid frames handed on
  std::uint64_t garbage_bytes = 0;  ///< bytes that were not part of a valid frame
  std::uint64_t bad_crc = 0;        ///< frames whose CRC did not match
  std::uint64_t truncated = 0;      ///< frames cut short (COBS ran past the delimiter, < 10 bytes)
  std::uint64_t malformed = 0;      ///< over-long frames, wrong body lengths, bad COBS
  std::uint64_t bad_version = 0;    ///< frames of another protocol version
  std::uint64_t unknown_type = 0;   ///< frames of a type version 1 does not define
  std::uint64_t seq_gaps = 0;       ///< places where the sequence number jumped forward
  std::uint64_t frames_lost = 0;    ///< frames missing in those gaps
  std::uint64_t seq_resets = 0;     ///< jumps backwards (device reset or duplicate)
  std::uint64_t time_wraps = 0;     ///< the 32-bit µs clock wrapped

  std::uint64_t rejected() const {
    return bad_crc + truncated + malformed + bad_version + unknown_type;
  }
};

/// Unwraps a 32-bit µs counter into a 64-bit one; values may come slightly out of order
/// (a difference is read as signed 32-bit, so up to ±35 minutes).
class TimeUnwrapper {
 public:
  std::int64_t Unwrap(std::uint32_t t);
  void Reset() { init_ = false; }
  std::uint64_t wraps() const { return wraps_; }

 private:
  bool init_ = false;
  std::int64_t ref_ = 0;  ///< latest unwrapped value
  std::uint64_t wraps_ = 0;
};

class FrameDecoder {
 public:
  /// Called for each valid frame; time_us64 is the header time, unwrapped.
  using Handler = std::function<void(const Frame& frame, std::int64_t time_us64)>;

  explicit FrameDecoder(Handler handler);

  void Feed(std::span<const std::uint8_t> bytes);
  /// Forgets the partial frame and the sequence/clock state (after a reconnect).
  void Reset();

  const DecoderCounters& counters() {
    c_.time_wraps = clock_.wraps();  // body times are unwrapped through clock() too
    return c_;
  }
  /// The time unwrapper of the device clock (use it for body times too).
  TimeUnwrapper& clock() { return clock_; }
  /// "frame 17: CRC 0x1234; expected 0xBEEF over 30 bytes", or empty.
  const std::string& last_error() const { return last_error_; }

 private:
  void EndFrame(std::span<const std::uint8_t> encoded);
  void Reject(std::size_t bytes, const std::string& why);

  Handler handler_;
  DecoderCounters c_;
  TimeUnwrapper clock_;
  std::vector<std::uint8_t> pending_;  // encoded bytes of a frame split across Feed() calls
  bool skipping_ = false;              // an over-long frame: drop bytes until a delimiter
  std::vector<std::uint8_t> payload_;
  Frame frame_;
  bool have_seq_ = false;
  std::uint16_t next_seq_ = 0;
  std::uint64_t frame_no_ = 0;
  std::string last_error_;
};

}  // namespace rb::acquire
