// rotorbench acquire: the rig link's messages and their bytes (firmware-protocol.md).
//
// Message structs carry wire values (counts, µs, levels); conversion to SI happens in
// rig_link.h with the scales the rig reports. Encode* build a whole wire frame (COBS and
// delimiter included); DecodePayload parses one un-stuffed payload and checks its CRC,
// version and length, naming what was wrong. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "acquire/protocol.h"
#include "base/status.h"

namespace rb::acquire {

// ---- Checksums and byte stuffing
/// CRC-16/IBM-3740 (proto::kCrcPoly, kCrcInit; see protocol.h).
std::uint16_t Crc16(std::span<const std::uint8_t> bytes, std::uint16_t crc = proto::kCrcInit);
/// COBS-encodes `in` and appends the result (without delimiter) to *out.
void CobsEncode(std::span<const std::uint8_t> in, std::vector<std::uint8_t>* out);
/// Decodes one COBS block (no delimiter inside). Returns the payload size written to
/// `out` (capacity out.size()), or -1 when the block is malformed or too long.
long CobsDecode(std::span<const std::uint8_t> in, std::span<std::uint8_t> out);

// ---- Messages, device → host
struct FrameHeader {
  std::uint8_t version = proto::kVersion;
  std::uint8_t type = 0;
  std::uint16_t seq = 0;
  std::uint32_t time_us = 0;
};

struct IdentifyMsg {
  std::uint8_t protocol = proto::kVersion;
  std::uint8_t fw_major = 0, fw_minor = 0;
  std::uint8_t flags = 0;  ///< proto::IdentFlag bits
  std::uint32_t serial = 0;
  std::uint32_t adc_rate_mhz = 0;       ///< ADC sample rate [mHz]
  std::uint32_t tach_resolution_ns = 0; ///< tach timer tick [ns]
  std::uint8_t marks_per_rev = 0;
  std::uint16_t output_full_scale = 0;  ///< level meaning 100 % duty
  float current_scale = 0, current_offset = 0;  ///< A = scale·counts + offset
  float voltage_scale = 0, voltage_offset = 0;  ///< V = scale·counts + offset
  float supply_volts = 0;       ///< what 100 % output applies [V]; 0 = unknown
  float current_limit_A = 0;    ///< trip level in force
  std::uint16_t locked_limit_ms = 0;
  std::uint16_t watchdog_ms = 0;
  std::string name;  ///< ≤ 16 ASCII characters
};

struct AdcRecord {
  std::uint16_t dt_us;
  std::int16_t current;
  std::int16_t voltage;
};

struct SamplesMsg {
  std::uint32_t t_base_us = 0;
  std::uint16_t output_level = 0;
  std::vector<AdcRecord> adc;
  std::vector<std::uint16_t> marks_dt_us;
};

struct EventMsg {
  std::uint32_t t_us = 0;
  std::uint8_t code = 0;   ///< proto::EventCode
  std::uint8_t arg = 0;    ///< cause, button id, ...
  std::uint16_t level = 0; ///< output level after the event
  float value = 0;
};

struct AckMsg {
  std::uint16_t cmd_seq = 0;
  std::uint8_t cmd_type = 0;
  std::uint8_t result = 0;  ///< proto::AckResult
  std::uint32_t detail = 0;
};

struct LogMsg {
  std::uint8_t severity = 1;  ///< 0 debug, 1 info, 2 warning, 3 error
  std::string text;
};

struct StatusMsg {
  std::uint16_t output_level = 0;
  std::uint8_t flags = 0;  ///< proto::StatusFlag bits
  std::uint32_t frames_dropped = 0;
  std::uint32_t commands = 0;
};

// ---- Messages, host → device
struct HelloCmd {};
struct SetOutputCmd {
  std::uint16_t level = 0;
};
struct StreamCmd {
  bool on = false;
};
struct PingCmd {
  std::uint32_t token = 0;
};
struct SetLimitsCmd {
  float current_limit_A = 0;  ///< 0 = keep the device's own
  std::uint16_t locked_limit_ms = 0;
  std::uint16_t watchdog_ms = 0;
};
struct SimShaftCmd {
  bool hold = false;
  std::uint16_t angle = 0;  ///< 1/65536 of a turn
};
struct SimFaultCmd {
  std::uint8_t fault = 0;  ///< proto::SimFault
  std::uint32_t param = 0;
};

using Message = std::variant<IdentifyMsg, SamplesMsg, EventMsg, AckMsg, LogMsg, StatusMsg, HelloCmd,
                             SetOutputCmd, StreamCmd, PingCmd, SetLimitsCmd, SimShaftCmd,
                             SimFaultCmd>;

struct Frame {
  FrameHeader header;
  Message msg;
};

/// The wire type of a message.
std::uint8_t TypeOf(const Message& m);
/// "identify", "samples", ... for messages and logs.
const char* TypeName(std::uint8_t type);

/// Appends the complete wire frame (COBS + 0x00) of `msg` to *out.
/// REQUIRES: a SamplesMsg has ≤ 255 ADC records and ≤ 255 marks; a LogMsg ≤ 240 bytes.
void EncodeFrame(std::uint16_t seq, std::uint32_t time_us, const Message& msg,
                 std::vector<std::uint8_t>* out);

/// Why a payload was refused (decoder counters are kept per reason).
enum class PayloadError { kNone, kTooShort, kBadCrc, kBadVersion, kUnknownType, kBadLength };

/// Parses one un-stuffed payload. On failure *why says which check failed and the
/// Status message says what was expected.
Result<Frame> DecodePayload(std::span<const std::uint8_t> payload, PayloadError* why = nullptr);
/// The same into an existing frame, reusing its buffers (the decoder's hot path).
Status DecodePayloadInto(std::span<const std::uint8_t> payload, Frame* out,
                         PayloadError* why = nullptr);

/// Hex text "01 41 00 …" of bytes, and its inverse (whitespace and '#' comments ignored).
std::string ToHex(std::span<const std::uint8_t> bytes);
Result<std::vector<std::uint8_t>> FromHex(std::string_view text);

}  // namespace rb::acquire
