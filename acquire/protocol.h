// rotorbench acquire: constants of the rig link protocol, version 1.
//
// The normative description is firmware-protocol.md at the repository root: framing
// (COBS, 0x00 delimiter), the 8-byte header, CRC-16/IBM-3740, every message's byte
// table and worked examples. Change nothing here without changing the document (and
// bumping kVersion when old firmware could misread the change). Numbers are on the wire:
// never renumber a released value. Thread-safe (constants only).
#pragma once

#include <cstddef>
#include <cstdint>

namespace rb::acquire::proto {

inline constexpr std::uint8_t kVersion = 1;  ///< header byte 0

/// Frame layout (decoded payload): header, body, CRC. Little-endian throughout.
inline constexpr std::size_t kHeaderSize = 8;  ///< version, type, seq u16, time_us u32
inline constexpr std::size_t kCrcSize = 2;
inline constexpr std::size_t kMinPayload = kHeaderSize + kCrcSize;
inline constexpr std::size_t kMaxBody = 2048;  ///< SAMPLES with 255 ADC + 255 marks fits
inline constexpr std::size_t kMaxPayload = kHeaderSize + kMaxBody + kCrcSize;
/// COBS adds one byte per 254 started; plus the 0x00 delimiter.
inline constexpr std::size_t kMaxEncoded = kMaxPayload + (kMaxPayload + 253) / 254 + 1;
inline constexpr std::uint8_t kDelimiter = 0x00;

/// CRC-16/IBM-3740: poly 0x1021, init 0xFFFF, no reflection, xorout 0; "123456789" → 0x29B1.
inline constexpr std::uint16_t kCrcPoly = 0x1021;
inline constexpr std::uint16_t kCrcInit = 0xFFFF;
inline constexpr std::uint16_t kCrcCheck = 0x29B1;

/// Message types. Device → host have bit 6 clear; host → device have bit 6 set;
/// 0x60–0x7F are reserved for simulated rigs and test fixtures (real firmware answers
/// kUnknownType).
enum MsgType : std::uint8_t {
  kIdentify = 0x01,
  kSamples = 0x02,
  kEvent = 0x03,
  kAck = 0x04,
  kLog = 0x05,
  kStatus = 0x06,
  kHello = 0x41,
  kSetOutput = 0x42,
  kStream = 0x43,
  kPing = 0x44,
  kSetLimits = 0x45,
  kSimShaft = 0x61,
  kSimFault = 0x62,
};

/// Body sizes of the fixed-size messages.
inline constexpr std::size_t kIdentifyBody = 64;
inline constexpr std::size_t kSamplesHeader = 8;
inline constexpr std::size_t kAdcRecord = 6;   ///< u16 dt_us, i16 current, i16 voltage
inline constexpr std::size_t kMarkRecord = 2;  ///< u16 dt_us
inline constexpr std::size_t kEventBody = 12;
inline constexpr std::size_t kAckBody = 8;
inline constexpr std::size_t kStatusBody = 12;
inline constexpr std::size_t kMaxLogText = 240;
inline constexpr std::size_t kNameSize = 16;
inline constexpr std::uint32_t kMaxBatchSpanUs = 65535;  ///< u16 offsets from t_base

/// IDENTIFY flags.
enum IdentFlag : std::uint8_t {
  kFlagPwm = 0x01,          ///< output accepts levels between 0 and full scale
  kFlagVoltage = 0x02,      ///< a terminal-voltage channel is present
  kFlagSimulated = 0x04,    ///< a simulator: accepts the 0x60–0x7F commands
  kFlagOpenCircuit = 0x08,  ///< output off really opens the motor circuit
};

/// EVENT codes.
enum EventCode : std::uint8_t {
  kEvOutputOn = 1,
  kEvOutputOff = 2,
  kEvCurrentTrip = 3,
  kEvLockedTrip = 4,
  kEvWatchdogTrip = 5,
  kEvButton = 6,
  kEvLevelChange = 7,
  kEvShaft = 8,  ///< simulated rigs: shaft held (arg 1) or released (arg 0)
};

/// Causes of kEvOutputOff / kEvOutputOn (EVENT arg byte).
enum Cause : std::uint8_t {
  kCauseHost = 0,
  kCauseCurrentTrip = 1,
  kCauseLockedTrip = 2,
  kCauseWatchdog = 3,
  kCauseButton = 4,
};

/// ACK results.
enum AckResult : std::uint8_t {
  kAckOk = 0,
  kAckBadLength = 1,
  kAckBadValue = 2,
  kAckRefused = 3,
  kAckUnknownType = 4,
  kAckBadVersion = 5,
};

/// STATUS flags.
enum StatusFlag : std::uint8_t {
  kStStreaming = 0x01,
  kStOutputOn = 0x02,
  kStShaftHeld = 0x04,
};

/// SIM_FAULT kinds (simulated rigs only).
enum SimFault : std::uint8_t {
  kFaultGarbage = 1,  ///< param: bytes of random garbage, sent at once
  kFaultDrop = 2,     ///< param: drop the next N frames (sequence numbers still advance)
  kFaultStall = 3,    ///< param: send nothing for N ms (data is lost, not delayed)
  kFaultVanish = 4,   ///< param: disappear for N ms like an unplugged cable (0 = for good)
  kFaultCorrupt = 5,  ///< param: send the next N frames with a wrong CRC
};

/// Timing promises of the device (firmware-protocol.md §6).
inline constexpr std::uint32_t kStatusPeriodMs = 1000;
inline constexpr std::uint32_t kMaxSamplesPeriodMs = 20;

}  // namespace rb::acquire::proto
