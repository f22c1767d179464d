#include "acquire/rig_link.h"

#include <algorithm>
#include <chrono>
#include <cmath>

namespace rb::acquire {
namespace {

using Clock = std::chrono::steady_clock;

const char* AckResultName(std::uint8_t r) {
  switch (r) {
    case proto::kAckOk: return "ok";
    case proto::kAckBadLength: return "bad length";
    case proto::kAckBadValue: return "bad value";
    case proto::kAckRefused: return "refused";
    case proto::kAckUnknownType: return "unknown command";
    case proto::kAckBadVersion: return "bad version";
  }
  return "unknown result";
}

}  // namespace

RigLink::RigLink(ByteSource* port)
    : port_(port), decoder_([this](const Frame& f, std::int64_t t) { OnFrame(f, t); }) {
  buf_.resize(16384);
}

void RigLink::OnFrame(const Frame& f, std::int64_t) {
  TimeUnwrapper& clock = decoder_.clock();
  std::visit(
      [&](const auto& m) {
        using T = std::decay_t<decltype(m)>;
        if constexpr (std::is_same_v<T, IdentifyMsg>) {
          RigInfo r;
          r.ident = m;
          r.instrument = m.name + "#" + std::to_string(m.serial);
          r.adc_rate_hz = m.adc_rate_mhz / 1000.0;
          r.tach_resolution_s = m.tach_resolution_ns * 1e-9;
          r.supply_volts = m.supply_volts;
          r.simulated = m.flags & proto::kFlagSimulated;
          r.pwm = m.flags & proto::kFlagPwm;
          info_ = std::move(r);
        } else if constexpr (std::is_same_v<T, SamplesMsg>) {
          const std::int64_t base = clock.Unwrap(m.t_base_us);
          // Samples that arrive before IDENTIFY (a rig still streaming to a host that
          // restarted) have no known scale: they are skipped, never stored as raw counts.
          if (!info_) return;
          const IdentifyMsg* id = &info_->ident;
          const double is = id->current_scale, io = id->current_offset;
          const double vs = id->voltage_scale, vo = id->voltage_offset;
          for (const AdcRecord& a : m.adc) {
            data_.adc.push_back({base + a.dt_us, is * a.current + io, vs * a.voltage + vo});
          }
          for (std::uint16_t d : m.marks_dt_us) data_.marks_us.push_back(base + d);
        } else if constexpr (std::is_same_v<T, EventMsg>) {
          data_.events.push_back({clock.Unwrap(m.t_us), m});
        } else if constexpr (std::is_same_v<T, AckMsg>) {
          acks_[m.cmd_seq] = m;
          if (acks_.size() > 64) acks_.erase(acks_.begin());  // unclaimed ACKs (pings)
        } else if constexpr (std::is_same_v<T, LogMsg>) {
          static const char* kSev[] = {"debug", "info", "warning", "error"};
          data_.logs.push_back(std::string(kSev[m.severity & 3]) + ": " + m.text);
        } else if constexpr (std::is_same_v<T, StatusMsg>) {
          data_.status = m;
        }
        // Host → device messages from a device are ignored (counted as frames only).
      },
      f.msg);
}

Status RigLink::Poll(int timeout_ms) {
  Result<std::size_t> n = port_->Read(buf_, timeout_ms);
  if (!n.ok()) return n.status();
  if (*n > 0) {
    bytes_read_ += *n;
    decoder_.Feed({buf_.data(), *n});
  }
  return Status::Ok();
}

RigData RigLink::TakeData() {
  RigData out = std::move(data_);
  data_ = RigData{};
  return out;
}

Result<std::uint16_t> RigLink::Send(const Message& cmd) {
  const std::uint16_t seq = next_seq_++;
  std::vector<std::uint8_t> wire;
  EncodeFrame(seq, 0, cmd, &wire);
  RB_RETURN_IF_ERROR(port_->Write(wire, 500));
  return seq;
}

Result<AckMsg> RigLink::Command(const Message& cmd, int timeout_ms) {
  // A command or its ACK can be lost on the wire; the host retries (firmware-protocol.md).
  // Real-rig commands are idempotent, so a resend is safe; the simulator's own commands are
  // sent once.
  const bool sim_only = std::holds_alternative<SimShaftCmd>(cmd) || std::holds_alternative<SimFaultCmd>(cmd);
  const int sends = sim_only ? 1 : 3;
  std::vector<std::uint16_t> sent;
  for (int attempt = 0; attempt < sends; ++attempt) {
    Result<std::uint16_t> seq = Send(cmd);
    if (!seq.ok()) return seq.status();
    sent.push_back(*seq);
    const auto deadline = Clock::now() + std::chrono::milliseconds(timeout_ms);
    while (true) {
      for (std::uint16_t s : sent) {
        auto it = acks_.find(s);
        if (it == acks_.end()) continue;
        const AckMsg a = it->second;
        acks_.erase(it);
        if (a.result != proto::kAckOk) {
          return Status::FailedPrecondition(port_->name() + ": rig answered '" +
                                            AckResultName(a.result) + "' to " +
                                            TypeName(TypeOf(cmd)));
        }
        return a;
      }
      const auto left =
          std::chrono::duration_cast<std::chrono::milliseconds>(deadline - Clock::now()).count();
      if (left <= 0) break;
      RB_RETURN_IF_ERROR(Poll(static_cast<int>(std::min<long>(left, 20))));
    }
  }
  return Status::IOError(port_->name() + ": no answer to " + TypeName(TypeOf(cmd)) + " within " +
                         std::to_string(timeout_ms) + " ms, " + std::to_string(sends) +
                         (sends == 1 ? " try" : " tries") + "; expected an ACK (is this a rotorbench rig?)");
}

Result<RigInfo> RigLink::Identify(int timeout_ms, int tries) {
  info_.reset();
  for (int k = 0; k < tries; ++k) {
    Result<std::uint16_t> seq = Send(HelloCmd{});
    if (!seq.ok()) return seq.status();
    const auto deadline = Clock::now() + std::chrono::milliseconds(timeout_ms);
    while (Clock::now() < deadline) {
      RB_RETURN_IF_ERROR(Poll(20));
      if (info_) {
        if (info_->ident.protocol != proto::kVersion) {
          return Status::Unsupported(port_->name() + ": rig speaks protocol " +
                                     std::to_string(info_->ident.protocol) + "; expected " +
                                     std::to_string(proto::kVersion));
        }
        return *info_;
      }
    }
  }
  std::string detail;
  const DecoderCounters c = decoder_.counters();
  if (c.bytes == 0) {
    detail = "nothing was received";
  } else {
    detail = std::to_string(c.bytes) + " bytes received, " + std::to_string(c.frames) +
             " valid frames" + (last_error().empty() ? "" : "; last problem: " + last_error());
  }
  return Status::IOError(port_->name() + ": no IDENTIFY after " + std::to_string(tries) +
                         " HELLOs (" + detail + "); expected a rig speaking rotorbench rig link v1");
}

std::uint16_t LevelFor(const RigInfo& info, double fraction) {
  const double fs = std::max<double>(1, info.ident.output_full_scale);
  return static_cast<std::uint16_t>(std::lround(std::clamp(fraction, 0.0, 1.0) * fs));
}

}  // namespace rb::acquire
