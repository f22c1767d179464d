// rotorbench acquire: rig firmware around the bench simulator (the device side of the
// rig link, firmware-protocol.md §6), without any I/O.
//
// SimFirmware is driven by its runner (sim_runner.h): AdvanceTo(t) steps the simulated
// bench to device time t (seconds since start) and queues frames; Receive() takes host
// bytes and obeys the commands at the current time; TakeOutput() hands over the bytes to
// send. It enforces its current, locked-rotor and watchdog limits, injects the faults
// it is told to, models the user's hand on the shaft (SIM_SHAFT), and can also feed
// plain-text instrument lines. Deterministic for a given seed and call sequence.
// Not thread-safe.
#pragma once

#include <cstdint>
#include <cstdio>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "acquire/decoder.h"
#include "model/simulate.h"

namespace rb::acquire {

struct SimRigOptions {
  model::BenchModel bench;          ///< motor, instruments, seed (default: the demo bench)
  double supply_volts = 6.0;        ///< what 100 % output applies, before the supply's resistance
  std::string name = "rig-sim";
  std::uint32_t serial = 1;
  std::uint16_t full_scale = 1000;  ///< output level meaning 100 %
  double current_limit_A = 8.0;     ///< hard limits (the host may lower them)
  std::uint16_t locked_limit_ms = 1000;
  std::uint16_t watchdog_ms = 1000;
  double frame_period_s = 0.01;     ///< a SAMPLES frame this often while streaming
  std::uint32_t clock_start_us = 0; ///< device clock at start (near 2^32 to test wraps)
  bool stream_at_start = false;     ///< stream without waiting for STREAM on
  bool shaft_held = false;          ///< start with the shaft held (a resistor in place of a motor)
  // Deterministic fault injection (0 = off).
  int drop_every = 0;               ///< drop every Nth frame built
  int corrupt_every = 0;            ///< send every Nth frame with a wrong CRC
  double garbage_every_s = 0;       ///< send 37 garbage bytes this often
  // The "button": output on for auto_on_s, off for auto_off_s, repeatedly (0 = never).
  double auto_on_s = 0, auto_off_s = 0, auto_level = 1.0, auto_start_s = 0.5;
};

class SimFirmware {
 public:
  explicit SimFirmware(const SimRigOptions& options);

  /// Steps the bench to device time t [s since start], queueing frames and text.
  void AdvanceTo(double t);
  /// Bytes from the host; commands take effect at the current time.
  void Receive(std::span<const std::uint8_t> bytes);
  /// The bytes to send now (frames, garbage); clears the queue.
  std::vector<std::uint8_t> TakeOutput();
  /// While the link is full (the host is not reading), frames are built and dropped,
  /// as a device with a full transmit buffer does; their sequence numbers are used up.
  void SetLinkFull(bool full) { link_full_ = full; }
  /// Which plain-text instruments to feed (their observations are kept only then).
  void EnableText(bool tach, bool meter) {
    text_tach_ = tach;
    text_meter_ = meter;
  }

  /// Reset as after power-up (seq 0, output off, not streaming); the motor keeps turning.
  void Reset();

  /// Applies a fault as SIM_FAULT would (the runner's scheduled faults use this).
  /// Returns false for an unknown fault kind.
  bool InjectFault(const SimFaultCmd& fault);
  /// A vanish (or stall) requested by SIM_FAULT: how long, in seconds; cleared on read.
  std::optional<double> TakeVanishRequest();

  /// Plain-text instrument lines due since the last call (tach: "T <rpm>", meter:
  /// "I <A> V <V>"), each ending in "\r\n".
  std::string TakeTachLines(double rate_hz);
  std::string TakeMeterLines(double rate_hz);

  /// Writes every frame built, and every record in it, to `f` (CSV), or stops when null.
  void SetEmissionLog(std::FILE* f) { log_ = f; }

  double now() const { return t_; }
  std::uint64_t frames_built() const { return frames_built_; }
  std::uint64_t frames_dropped() const { return frames_dropped_; }
  bool output_on() const { return level_ > 0; }
  const model::TrueState& truth() const { return sim_.truth(); }

 private:
  std::uint32_t DevUs(double t) const;
  std::int64_t DevUs64(double t) const;
  bool Queue(const Message& m, double t);
  void FlushSamples();
  void AddRecord(std::int64_t us, const model::AdcSample* a);  // a == nullptr: a mark
  void ApplyLevel(std::uint16_t level, std::uint8_t cause, double t);
  void Trip(std::uint8_t code, std::uint8_t cause, float value, double t);
  void HandleCommand(const Frame& f);
  void SendIdentify();
  void CheckLimits(const model::Observations& obs, std::size_t adc_from, std::size_t marks_from);

  SimRigOptions o_;
  model::BenchSimulator sim_;
  double t_ = 0;
  std::uint16_t seq_ = 0;
  bool streaming_ = false;
  std::uint16_t level_ = 0;
  bool shaft_held_ = false;
  double mask_marks_until_ = -1;
  double current_limit_, host_current_limit_ = 0;
  double locked_limit_s_, watchdog_s_;
  bool host_drives_ = false;  // output switched on by a host command (watchdog applies)
  double last_host_frame_ = 0;
  double on_since_ = 0, last_mark_ = -1;
  int over_count_ = 0;
  double next_frame_ = 0, next_status_ = 0, next_garbage_ = 0, next_auto_ = -1;
  bool auto_on_ = false;
  std::uint32_t commands_ = 0;
  std::uint64_t frames_built_ = 0, frames_dropped_ = 0;
  int drop_next_ = 0, corrupt_next_ = 0;
  std::optional<double> vanish_request_;
  SamplesMsg batch_;
  std::int64_t batch_base_us_ = -1;
  std::int64_t batch_first_ = 0, batch_last_ = 0;
  std::vector<std::uint8_t> out_;
  bool link_full_ = false;
  double stall_until_ = -1;
  bool trip_pending_ = false;
  std::uint8_t trip_code_ = 0, trip_cause_ = 0;
  float trip_value_ = 0;
  FrameDecoder decoder_;
  std::mt19937 rng_;
  std::FILE* log_ = nullptr;
  // Text instruments: observations not yet turned into lines.
  bool text_tach_ = false, text_meter_ = false;
  std::vector<double> text_marks_;
  struct TextAdc {
    double t, i, v;
  };
  std::vector<TextAdc> text_adc_;
  double next_tach_line_ = 0, next_meter_line_ = 0, text_last_mark_ = -1, text_speed_ = 0;
};

/// The device-side emission log written by SetEmissionLog (tests, benchmarks). Lines:
/// "F,SEQ,SENT" per frame built, then "A,T_US,SENT,I,V" per ADC record (I, V: the raw
/// counts sent) and "M,T_US,SENT" per mark in it (T_US: device µs since its clock started,
/// not wrapped; SENT: 1 or 0). The runner (sim_runner.h) starts the log with
/// "C,CLOCK_START_US,MONOTONIC_NS": the device clock's start value and the CLOCK_MONOTONIC
/// reading (ns) at that instant, so a test can tell the rig's time at any moment of its own.
struct EmissionLog {
  struct Counts {
    std::int16_t current, voltage;
  };
  std::vector<std::int64_t> adc_us;    ///< every ADC record sent
  std::vector<Counts> adc_counts;      ///< ... and its raw counts (same order; empty for old logs)
  std::vector<std::int64_t> marks_us;  ///< every mark sent
  std::uint64_t frames_sent = 0, frames_dropped = 0;
  std::int64_t clock_start_us = 0;          ///< device clock at its start
  std::int64_t monotonic_ns_at_start = -1;  ///< CLOCK_MONOTONIC then (-1: not logged)
};
Result<EmissionLog> ReadEmissionLog(const std::string& path);

}  // namespace rb::acquire
