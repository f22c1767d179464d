#include "acquire/sim_firmware.h"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>

namespace rb::acquire {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

std::int16_t ClampI16(std::int32_t v) {
  return static_cast<std::int16_t>(std::clamp<std::int32_t>(v, -32768, 32767));
}

}  // namespace

SimFirmware::SimFirmware(const SimRigOptions& options)
    : o_(options),
      sim_(options.bench),
      current_limit_(options.current_limit_A),
      locked_limit_s_(options.locked_limit_ms / 1000.0),
      watchdog_s_(options.watchdog_ms / 1000.0),
      decoder_([this](const Frame& f, std::int64_t) { HandleCommand(f); }),
      rng_(static_cast<std::uint32_t>(options.bench.seed * 2654435761u + 17)) {
  sim_.SetDrive(model::Drive::kOpenCircuit);
  shaft_held_ = options.shaft_held;
  next_auto_ = (o_.auto_on_s > 0 && o_.auto_off_s > 0) ? o_.auto_start_s : -1;
  next_garbage_ = o_.garbage_every_s;
  Reset();
}

std::uint32_t SimFirmware::DevUs(double t) const {
  return static_cast<std::uint32_t>(static_cast<std::uint64_t>(DevUs64(t)));
}

std::int64_t SimFirmware::DevUs64(double t) const {
  return static_cast<std::int64_t>(o_.clock_start_us) + std::llround(t * 1e6);
}

void SimFirmware::Reset() {
  seq_ = 0;
  streaming_ = o_.stream_at_start;
  if (level_ != 0) {  // power lost: the switch opens, nobody hears about it
    level_ = 0;
    sim_.SetSupplyVolts(0);
    sim_.SetDrive(model::Drive::kOpenCircuit);
  }
  host_drives_ = false;
  current_limit_ = o_.current_limit_A;
  locked_limit_s_ = o_.locked_limit_ms / 1000.0;
  watchdog_s_ = o_.watchdog_ms / 1000.0;
  decoder_.Reset();
  batch_ = SamplesMsg{};
  batch_base_us_ = -1;
  out_.clear();
  drop_next_ = corrupt_next_ = 0;
  stall_until_ = -1;
  trip_pending_ = false;
  over_count_ = 0;
  next_frame_ = t_ + o_.frame_period_s;
  next_status_ = t_ + proto::kStatusPeriodMs / 1000.0;
  SendIdentify();
}

void SimFirmware::SendIdentify() {
  const model::InstrumentModel& ins = o_.bench.instruments;
  IdentifyMsg m;
  m.fw_major = 1;
  m.fw_minor = 0;
  m.flags = proto::kFlagPwm | proto::kFlagVoltage | proto::kFlagSimulated | proto::kFlagOpenCircuit;
  m.serial = o_.serial;
  m.adc_rate_mhz = static_cast<std::uint32_t>(std::lround(ins.adc_rate_hz * 1000.0));
  m.tach_resolution_ns = static_cast<std::uint32_t>(std::lround(ins.tach.timer_resolution_s * 1e9));
  m.marks_per_rev = static_cast<std::uint8_t>(ins.tach.marks_per_rev);
  m.output_full_scale = o_.full_scale;
  m.current_scale = static_cast<float>(ins.current.lsb);
  m.voltage_scale = static_cast<float>(ins.voltage.lsb);
  m.supply_volts = static_cast<float>(o_.supply_volts);
  m.current_limit_A = static_cast<float>(current_limit_);
  m.locked_limit_ms = static_cast<std::uint16_t>(std::lround(locked_limit_s_ * 1000));
  m.watchdog_ms = static_cast<std::uint16_t>(std::lround(watchdog_s_ * 1000));
  m.name = o_.name.substr(0, proto::kNameSize);
  Queue(m, t_);
}

bool SimFirmware::Queue(const Message& m, double t) {
  const std::uint16_t seq = seq_++;
  ++frames_built_;
  bool drop = link_full_ || t < stall_until_;
  if (drop_next_ > 0) {
    --drop_next_;
    drop = true;
  }
  if (o_.drop_every > 0 && frames_built_ % static_cast<std::uint64_t>(o_.drop_every) == 0) drop = true;
  if (log_) std::fprintf(log_, "F,%u,%d\n", seq, drop ? 0 : 1);
  if (drop) {
    ++frames_dropped_;
    return false;
  }
  bool corrupt = false;
  if (corrupt_next_ > 0) {
    --corrupt_next_;
    corrupt = true;
  }
  if (o_.corrupt_every > 0 && frames_built_ % static_cast<std::uint64_t>(o_.corrupt_every) == 0) {
    corrupt = true;
  }
  if (!corrupt) {
    EncodeFrame(seq, DevUs(t), m, &out_);
    return true;
  }
  // Encode, un-stuff, flip a CRC bit, stuff again: a frame that fails only its CRC.
  std::vector<std::uint8_t> wire;
  EncodeFrame(seq, DevUs(t), m, &wire);
  std::vector<std::uint8_t> payload(proto::kMaxPayload);
  const long n = CobsDecode({wire.data(), wire.size() - 1}, payload);
  payload.resize(static_cast<std::size_t>(n));
  payload.back() ^= 0x01;
  CobsEncode(payload, &out_);
  out_.push_back(proto::kDelimiter);
  return true;  // sent (the host will reject it)
}

void SimFirmware::FlushSamples() {
  if (batch_base_us_ < 0) return;
  const std::int64_t base = batch_base_us_;
  batch_.t_base_us = static_cast<std::uint32_t>(static_cast<std::uint64_t>(base));
  const bool sent = Queue(batch_, t_);
  if (log_) {
    // Records were stored with dt relative to base.
    for (const AdcRecord& a : batch_.adc) {
      std::fprintf(log_, "A,%lld,%d,%d,%d\n", static_cast<long long>(base + a.dt_us), sent, a.current, a.voltage);
    }
    for (std::uint16_t d : batch_.marks_dt_us) std::fprintf(log_, "M,%lld,%d\n", static_cast<long long>(base + d), sent);
  }
  batch_.adc.clear();
  batch_.marks_dt_us.clear();
  batch_base_us_ = -1;
}

void SimFirmware::AddRecord(std::int64_t us, const model::AdcSample* a) {
  if (batch_base_us_ >= 0 && (batch_.adc.size() == 255 || batch_.marks_dt_us.size() == 255 ||
                              us - batch_base_us_ > 60000)) {
    FlushSamples();
  }
  if (batch_base_us_ < 0) batch_base_us_ = us;
  const auto dt = static_cast<std::uint16_t>(std::max<std::int64_t>(0, us - batch_base_us_));
  if (a) {
    batch_.adc.push_back({dt, ClampI16(a->current_counts), ClampI16(a->voltage_counts)});
  } else {
    batch_.marks_dt_us.push_back(dt);
  }
}

void SimFirmware::ApplyLevel(std::uint16_t level, std::uint8_t cause, double t) {
  if (level == level_) return;
  const std::uint16_t old = level_;
  level_ = level;
  over_count_ = 0;
  EventMsg e;
  e.t_us = DevUs(t);
  e.arg = cause;
  e.level = level;
  if (level > 0) {
    sim_.SetSupplyVolts(o_.supply_volts * level / std::max<double>(1, o_.full_scale));
    sim_.SetDrive(shaft_held_ ? model::Drive::kLocked : model::Drive::kConnected);
    if (old == 0) on_since_ = t;
    e.code = old == 0 ? proto::kEvOutputOn : proto::kEvLevelChange;
  } else {
    sim_.SetSupplyVolts(0);
    sim_.SetDrive(model::Drive::kOpenCircuit);
    e.code = proto::kEvOutputOff;
  }
  Queue(e, t);
}

void SimFirmware::Trip(std::uint8_t code, std::uint8_t cause, float value, double t) {
  EventMsg e;
  e.t_us = DevUs(t);
  e.code = code;
  e.arg = cause;
  e.level = 0;
  e.value = value;
  Queue(e, t);
  host_drives_ = false;
  ApplyLevel(0, cause, t);
}

void SimFirmware::AdvanceTo(double t) {
  const model::InstrumentModel& ins = o_.bench.instruments;
  const double limit_counts = current_limit_ / ins.current.lsb;
  model::Observations obs;
  while (true) {
    if (next_auto_ >= 0 && t_ >= next_auto_) {
      auto_on_ = !auto_on_;
      host_drives_ = false;
      const auto lvl = static_cast<std::uint16_t>(std::lround(o_.auto_level * o_.full_scale));
      ApplyLevel(auto_on_ ? std::max<std::uint16_t>(1, lvl) : 0, proto::kCauseButton, t_);
      next_auto_ += auto_on_ ? o_.auto_on_s : o_.auto_off_s;
    }
    if (t_ >= next_status_) {
      std::uint8_t flags = (streaming_ ? proto::kStStreaming : 0) | (level_ ? proto::kStOutputOn : 0) |
                           (shaft_held_ ? proto::kStShaftHeld : 0);
      Queue(StatusMsg{level_, flags, static_cast<std::uint32_t>(frames_dropped_), commands_}, t_);
      next_status_ += proto::kStatusPeriodMs / 1000.0;
    }
    if (o_.garbage_every_s > 0 && t_ >= next_garbage_) {
      for (int k = 0; k < 37; ++k) out_.push_back(static_cast<std::uint8_t>(rng_()));
      out_.push_back(proto::kDelimiter);
      next_garbage_ += o_.garbage_every_s;
    }
    if (t_ >= next_frame_) {
      if (streaming_) FlushSamples();
      next_frame_ += o_.frame_period_s;
    }
    if (t_ >= t) break;
    double next = std::min({t, t_ + 1e-3, next_frame_, next_status_});
    if (next_auto_ >= 0) next = std::min(next, next_auto_);
    if (o_.garbage_every_s > 0) next = std::min(next, next_garbage_);
    obs.adc.clear();
    obs.tach_marks.clear();
    sim_.AdvanceTo(next, &obs);
    // ADC records and marks in time order, so that a batch's t_base precedes both lists.
    std::size_t ia = 0, im = 0;
    while (ia < obs.adc.size() || im < obs.tach_marks.size()) {
      const bool take_mark = im < obs.tach_marks.size() &&
                             (ia == obs.adc.size() || obs.tach_marks[im] < obs.adc[ia].t);
      if (take_mark) {
        const double m = obs.tach_marks[im++];
        if (shaft_held_ && m <= mask_marks_until_) continue;  // the hand turning the shaft
        last_mark_ = m;
        if (text_tach_) text_marks_.push_back(m);
        if (streaming_) AddRecord(DevUs64(m), nullptr);
        continue;
      }
      const model::AdcSample& a = obs.adc[ia++];
      if (level_ > 0 && std::abs(a.current_counts) > limit_counts) {
        if (++over_count_ == 3 && !trip_pending_) {
          trip_pending_ = true;
          trip_code_ = proto::kEvCurrentTrip;
          trip_cause_ = proto::kCauseCurrentTrip;
          trip_value_ = static_cast<float>(a.current_counts * ins.current.lsb);
        }
      } else {
        over_count_ = 0;
      }
      if (text_meter_) {
        text_adc_.push_back({a.t, a.current_counts * ins.current.lsb, a.voltage_counts * ins.voltage.lsb});
      }
      if (streaming_) AddRecord(DevUs64(a.t), &a);
    }
    t_ = next;
    if (trip_pending_) {
      trip_pending_ = false;
      Trip(trip_code_, trip_cause_, trip_value_, t_);
    }
    if (level_ > 0 && !shaft_held_ && locked_limit_s_ > 0 &&
        t_ - std::max(on_since_, last_mark_) > locked_limit_s_) {
      Trip(proto::kEvLockedTrip, proto::kCauseLockedTrip,
           static_cast<float>(t_ - std::max(on_since_, last_mark_)), t_);
    } else if (level_ > 0 && shaft_held_ && locked_limit_s_ > 0 && t_ - on_since_ > locked_limit_s_) {
      Trip(proto::kEvLockedTrip, proto::kCauseLockedTrip, static_cast<float>(t_ - on_since_), t_);
    }
    if (level_ > 0 && host_drives_ && watchdog_s_ > 0 && t_ - last_host_frame_ > watchdog_s_) {
      Trip(proto::kEvWatchdogTrip, proto::kCauseWatchdog, static_cast<float>(t_ - last_host_frame_), t_);
    }
  }
}

void SimFirmware::Receive(std::span<const std::uint8_t> bytes) { decoder_.Feed(bytes); }

void SimFirmware::HandleCommand(const Frame& f) {
  last_host_frame_ = t_;
  ++commands_;
  AckMsg ack;
  ack.cmd_seq = f.header.seq;
  ack.cmd_type = f.header.type;
  ack.result = proto::kAckOk;
  bool identify_after = false;
  std::visit(
      [&](const auto& m) {
        using T = std::decay_t<decltype(m)>;
        if constexpr (std::is_same_v<T, HelloCmd>) {
          identify_after = true;
        } else if constexpr (std::is_same_v<T, SetOutputCmd>) {
          if (m.level > o_.full_scale) {
            ack.result = proto::kAckBadValue;
          } else {
            host_drives_ = m.level > 0;
            ApplyLevel(m.level, proto::kCauseHost, t_);
            ack.detail = level_;
          }
        } else if constexpr (std::is_same_v<T, StreamCmd>) {
          if (m.on && !streaming_) {
            batch_ = SamplesMsg{};
            batch_base_us_ = -1;
          }
          streaming_ = m.on;
        } else if constexpr (std::is_same_v<T, PingCmd>) {
          ack.detail = m.token;
        } else if constexpr (std::is_same_v<T, SetLimitsCmd>) {
          if (m.current_limit_A > 0) current_limit_ = std::min<double>(o_.current_limit_A, m.current_limit_A);
          if (m.locked_limit_ms > 0) {
            locked_limit_s_ = std::min(o_.locked_limit_ms, m.locked_limit_ms) / 1000.0;
          }
          if (m.watchdog_ms > 0) {
            watchdog_s_ = (o_.watchdog_ms > 0 ? std::min(o_.watchdog_ms, m.watchdog_ms) : m.watchdog_ms) / 1000.0;
          }
        } else if constexpr (std::is_same_v<T, SimShaftCmd>) {
          if (m.hold) {
            if (std::abs(sim_.truth().w) > 1.0) {
              ack.result = proto::kAckRefused;  // nobody grabs a spinning shaft
              return;
            }
            const double target = m.angle / 65536.0 * kTwoPi;
            const double theta = sim_.truth().theta;
            const double delta = std::fmod(std::fmod(target - theta, kTwoPi) + kTwoPi, kTwoPi);
            sim_.SetRotorAngle(theta + delta);  // turned forward by hand to the position
            mask_marks_until_ = t_ + 2e-3;
            shaft_held_ = true;
            if (level_ > 0) sim_.SetDrive(model::Drive::kLocked);
          } else {
            shaft_held_ = false;
            if (level_ > 0) sim_.SetDrive(model::Drive::kConnected);
          }
          Queue(EventMsg{DevUs(t_), proto::kEvShaft, static_cast<std::uint8_t>(m.hold ? 1 : 0), level_,
                         static_cast<float>(m.angle / 65536.0)},
                t_);
        } else if constexpr (std::is_same_v<T, SimFaultCmd>) {
          if (!InjectFault(m)) ack.result = proto::kAckBadValue;
        } else {
          ack.result = proto::kAckUnknownType;  // a device message sent to the device
        }
      },
      f.msg);
  Queue(ack, t_);
  if (identify_after) SendIdentify();
}

bool SimFirmware::InjectFault(const SimFaultCmd& m) {
  switch (m.fault) {
    case proto::kFaultGarbage:
      for (std::uint32_t k = 0; k < std::min<std::uint32_t>(m.param, 100000); ++k) {
        out_.push_back(static_cast<std::uint8_t>(rng_()));
      }
      return true;
    case proto::kFaultDrop: drop_next_ += static_cast<int>(m.param); return true;
    case proto::kFaultStall: stall_until_ = t_ + m.param / 1000.0; return true;
    case proto::kFaultVanish: vanish_request_ = m.param / 1000.0; return true;
    case proto::kFaultCorrupt: corrupt_next_ += static_cast<int>(m.param); return true;
    default: return false;
  }
}

std::vector<std::uint8_t> SimFirmware::TakeOutput() {
  std::vector<std::uint8_t> out;
  out.swap(out_);
  return out;
}

std::optional<double> SimFirmware::TakeVanishRequest() {
  auto r = vanish_request_;
  vanish_request_.reset();
  return r;
}

std::string SimFirmware::TakeTachLines(double rate_hz) {
  std::string out;
  const double pitch = kTwoPi / std::max(1, o_.bench.instruments.tach.marks_per_rev);
  const double timeout = o_.bench.instruments.tach.stop_timeout_s;
  std::size_t used = 0;
  while (next_tach_line_ <= t_) {
    for (; used < text_marks_.size() && text_marks_[used] <= next_tach_line_; ++used) {
      const double m = text_marks_[used];
      text_speed_ = (text_last_mark_ >= 0 && m - text_last_mark_ <= timeout && m > text_last_mark_)
                        ? pitch / (m - text_last_mark_)
                        : 0.0;
      text_last_mark_ = m;
    }
    if (next_tach_line_ - text_last_mark_ > timeout) text_speed_ = 0;
    char buf[64];
    std::snprintf(buf, sizeof buf, "T %.1f rpm\r\n", text_speed_ * 60.0 / kTwoPi);
    out += buf;
    next_tach_line_ += 1.0 / rate_hz;
  }
  text_marks_.erase(text_marks_.begin(), text_marks_.begin() + static_cast<std::ptrdiff_t>(used));
  return out;
}

std::string SimFirmware::TakeMeterLines(double rate_hz) {
  std::string out;
  std::size_t used = 0;
  while (next_meter_line_ <= t_) {
    double si = 0, sv = 0;
    int n = 0;
    for (; used < text_adc_.size() && text_adc_[used].t <= next_meter_line_; ++used, ++n) {
      si += text_adc_[used].i;
      sv += text_adc_[used].v;
    }
    if (n > 0) {
      char buf[80];
      std::snprintf(buf, sizeof buf, "I %.4f A V %.3f V\r\n", si / n, sv / n);
      out += buf;
    }
    next_meter_line_ += 1.0 / rate_hz;
  }
  text_adc_.erase(text_adc_.begin(), text_adc_.begin() + static_cast<std::ptrdiff_t>(used));
  return out;
}

Result<EmissionLog> ReadEmissionLog(const std::string& path) {
  std::ifstream f(path);
  if (!f) return Status::NotFound(path + ": cannot read the emission log");
  EmissionLog log;
  std::string line;
  while (std::getline(f, line)) {
    if (line.size() < 4) continue;
    std::istringstream ss(line.substr(2));
    long long v = 0;
    char comma = 0;
    if (line[0] == 'C') {  // "C,CLOCK_START_US,MONOTONIC_NS"
      long long ns = 0;
      if (ss >> v >> comma >> ns) {
        log.clock_start_us = v;
        log.monotonic_ns_at_start = ns;
      }
      continue;
    }
    int sent = 0;
    ss >> v >> comma >> sent;
    if (line[0] == 'F') {
      (sent ? log.frames_sent : log.frames_dropped) += 1;
    } else if (line[0] == 'A' && sent) {
      int i = 0, u = 0;
      log.adc_us.push_back(v);
      if (ss >> comma >> i >> comma >> u) {
        log.adc_counts.push_back({static_cast<std::int16_t>(i), static_cast<std::int16_t>(u)});
      }
    } else if (line[0] == 'M' && sent) {
      log.marks_us.push_back(v);
    }
  }
  if (log.adc_counts.size() != log.adc_us.size()) log.adc_counts.clear();  // an older log
  return log;
}

}  // namespace rb::acquire
