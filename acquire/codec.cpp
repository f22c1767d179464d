#include "acquire/codec.h"

#include <array>
#include <cstring>

namespace rb::acquire {
namespace {

using proto::MsgType;

constexpr std::array<std::uint16_t, 256> MakeCrcTable() {
  std::array<std::uint16_t, 256> t{};
  for (unsigned i = 0; i < 256; ++i) {
    std::uint16_t c = static_cast<std::uint16_t>(i << 8);
    for (int k = 0; k < 8; ++k) {
      c = static_cast<std::uint16_t>((c & 0x8000) ? (c << 1) ^ proto::kCrcPoly : (c << 1));
    }
    t[i] = c;
  }
  return t;
}
constexpr std::array<std::uint16_t, 256> kCrcTable = MakeCrcTable();

/// Slicing-by-8 tables: kSlice[k][x] is the CRC contribution of byte x followed by k zero
/// bytes, so eight bytes fold in with eight independent look-ups.
constexpr std::array<std::array<std::uint16_t, 256>, 8> MakeSliceTables() {
  std::array<std::array<std::uint16_t, 256>, 8> t{};
  t[0] = MakeCrcTable();
  for (int k = 1; k < 8; ++k) {
    for (unsigned x = 0; x < 256; ++x) {
      const std::uint16_t p = t[k - 1][x];
      t[k][x] = static_cast<std::uint16_t>((p << 8) ^ t[0][p >> 8]);
    }
  }
  return t;
}
constexpr std::array<std::array<std::uint16_t, 256>, 8> kSlice = MakeSliceTables();

// ---- little-endian writer / reader
struct Writer {
  std::vector<std::uint8_t>* b;
  void U8(std::uint8_t v) { b->push_back(v); }
  void U16(std::uint16_t v) {
    b->push_back(static_cast<std::uint8_t>(v));
    b->push_back(static_cast<std::uint8_t>(v >> 8));
  }
  void U32(std::uint32_t v) {
    for (int k = 0; k < 4; ++k) b->push_back(static_cast<std::uint8_t>(v >> (8 * k)));
  }
  void I16(std::int16_t v) { U16(static_cast<std::uint16_t>(v)); }
  void F32(float f) {
    std::uint32_t v;
    std::memcpy(&v, &f, 4);
    U32(v);
  }
  void Text(const std::string& s, std::size_t n) {  // fixed field, NUL padded
    for (std::size_t k = 0; k < n; ++k) U8(k < s.size() ? static_cast<std::uint8_t>(s[k]) : 0);
  }
};

struct Reader {
  const std::uint8_t* p;
  std::uint8_t U8() { return *p++; }
  std::uint16_t U16() {
    const std::uint16_t v = static_cast<std::uint16_t>(p[0] | (p[1] << 8));
    p += 2;
    return v;
  }
  std::uint32_t U32() {
    const std::uint32_t v = static_cast<std::uint32_t>(p[0]) | (static_cast<std::uint32_t>(p[1]) << 8) |
                            (static_cast<std::uint32_t>(p[2]) << 16) |
                            (static_cast<std::uint32_t>(p[3]) << 24);
    p += 4;
    return v;
  }
  std::int16_t I16() { return static_cast<std::int16_t>(U16()); }
  float F32() {
    const std::uint32_t v = U32();
    float f;
    std::memcpy(&f, &v, 4);
    return f;
  }
  std::string Text(std::size_t n) {
    std::string s;
    for (std::size_t k = 0; k < n; ++k) {
      if (p[k] == 0) break;
      s.push_back(static_cast<char>(p[k]));
    }
    p += n;
    return s;
  }
};

void EncodeBody(const Message& m, Writer& w) {
  std::visit(
      [&w](const auto& x) {
        using T = std::decay_t<decltype(x)>;
        if constexpr (std::is_same_v<T, IdentifyMsg>) {
          w.U8(x.protocol);
          w.U8(x.fw_major);
          w.U8(x.fw_minor);
          w.U8(x.flags);
          w.U32(x.serial);
          w.U32(x.adc_rate_mhz);
          w.U32(x.tach_resolution_ns);
          w.U8(x.marks_per_rev);
          w.U8(0);
          w.U16(x.output_full_scale);
          w.F32(x.current_scale);
          w.F32(x.current_offset);
          w.F32(x.voltage_scale);
          w.F32(x.voltage_offset);
          w.F32(x.supply_volts);
          w.F32(x.current_limit_A);
          w.U16(x.locked_limit_ms);
          w.U16(x.watchdog_ms);
          w.Text(x.name, proto::kNameSize);
        } else if constexpr (std::is_same_v<T, SamplesMsg>) {
          w.U32(x.t_base_us);
          w.U16(x.output_level);
          w.U8(static_cast<std::uint8_t>(x.adc.size()));
          w.U8(static_cast<std::uint8_t>(x.marks_dt_us.size()));
          for (const AdcRecord& a : x.adc) {
            w.U16(a.dt_us);
            w.I16(a.current);
            w.I16(a.voltage);
          }
          for (std::uint16_t d : x.marks_dt_us) w.U16(d);
        } else if constexpr (std::is_same_v<T, EventMsg>) {
          w.U32(x.t_us);
          w.U8(x.code);
          w.U8(x.arg);
          w.U16(x.level);
          w.F32(x.value);
        } else if constexpr (std::is_same_v<T, AckMsg>) {
          w.U16(x.cmd_seq);
          w.U8(x.cmd_type);
          w.U8(x.result);
          w.U32(x.detail);
        } else if constexpr (std::is_same_v<T, LogMsg>) {
          w.U8(x.severity);
          const std::size_t n = std::min(x.text.size(), proto::kMaxLogText);
          for (std::size_t k = 0; k < n; ++k) w.U8(static_cast<std::uint8_t>(x.text[k]));
        } else if constexpr (std::is_same_v<T, StatusMsg>) {
          w.U16(x.output_level);
          w.U8(x.flags);
          w.U8(0);
          w.U32(x.frames_dropped);
          w.U32(x.commands);
        } else if constexpr (std::is_same_v<T, HelloCmd>) {
        } else if constexpr (std::is_same_v<T, SetOutputCmd>) {
          w.U16(x.level);
        } else if constexpr (std::is_same_v<T, StreamCmd>) {
          w.U8(x.on ? 1 : 0);
        } else if constexpr (std::is_same_v<T, PingCmd>) {
          w.U32(x.token);
        } else if constexpr (std::is_same_v<T, SetLimitsCmd>) {
          w.F32(x.current_limit_A);
          w.U16(x.locked_limit_ms);
          w.U16(x.watchdog_ms);
        } else if constexpr (std::is_same_v<T, SimShaftCmd>) {
          w.U8(x.hold ? 1 : 0);
          w.U8(0);
          w.U16(x.angle);
        } else if constexpr (std::is_same_v<T, SimFaultCmd>) {
          w.U8(x.fault);
          w.U8(0);
          w.U8(0);
          w.U8(0);
          w.U32(x.param);
        }
      },
      m);
}

/// Expected body size of a fixed-size type; 0 for variable ones (checked separately).
std::size_t FixedBody(std::uint8_t type) {
  switch (type) {
    case proto::kIdentify: return proto::kIdentifyBody;
    case proto::kEvent: return proto::kEventBody;
    case proto::kAck: return proto::kAckBody;
    case proto::kStatus: return proto::kStatusBody;
    case proto::kSetOutput: return 2;
    case proto::kStream: return 1;
    case proto::kPing: return 4;
    case proto::kSetLimits: return 8;
    case proto::kSimShaft: return 4;
    case proto::kSimFault: return 8;
    default: return 0;
  }
}

bool KnownType(std::uint8_t t) {
  switch (t) {
    case proto::kIdentify: case proto::kSamples: case proto::kEvent: case proto::kAck:
    case proto::kLog: case proto::kStatus: case proto::kHello: case proto::kSetOutput:
    case proto::kStream: case proto::kPing: case proto::kSetLimits: case proto::kSimShaft:
    case proto::kSimFault:
      return true;
    default:
      return false;
  }
}

}  // namespace

std::uint16_t Crc16(std::span<const std::uint8_t> bytes, std::uint16_t crc) {
  const std::uint8_t* p = bytes.data();
  std::size_t n = bytes.size();
  for (; n >= 8; n -= 8, p += 8) {
    crc = static_cast<std::uint16_t>(
        kSlice[7][((crc >> 8) ^ p[0]) & 0xFF] ^ kSlice[6][(crc ^ p[1]) & 0xFF] ^ kSlice[5][p[2]] ^
        kSlice[4][p[3]] ^ kSlice[3][p[4]] ^ kSlice[2][p[5]] ^ kSlice[1][p[6]] ^ kSlice[0][p[7]]);
  }
  for (std::uint8_t b : std::span<const std::uint8_t>(p, n)) {
    crc = static_cast<std::uint16_t>((crc << 8) ^ kCrcTable[((crc >> 8) ^ b) & 0xFF]);
  }
  return crc;
}

void CobsEncode(std::span<const std::uint8_t> in, std::vector<std::uint8_t>* out) {
  std::size_t code_pos = out->size();
  out->push_back(0);  // placeholder for the first code byte
  std::uint8_t code = 1;
  for (std::size_t k = 0; k < in.size(); ++k) {
    const std::uint8_t b = in[k];
    if (b != 0) {
      out->push_back(b);
      ++code;
    }
    if (b == 0 || code == 0xFF) {
      (*out)[code_pos] = code;
      code = 1;
      // A full block that ends the input needs no further code byte (canonical COBS).
      if (b == 0 || k + 1 < in.size()) {
        code_pos = out->size();
        out->push_back(0);
      } else {
        return;
      }
    }
  }
  (*out)[code_pos] = code;
}

long CobsDecode(std::span<const std::uint8_t> in, std::span<std::uint8_t> out) {
  std::size_t i = 0, o = 0;
  const std::size_t n = in.size();
  while (i < n) {
    const std::uint8_t code = in[i++];
    if (code == 0) return -1;
    const std::size_t run = code - 1u;
    if (i + run > n || o + run > out.size()) return -1;
    if (run < 16) {  // most blocks are short (zeros are common in binary payloads)
      for (std::size_t k = 0; k < run; ++k) out[o + k] = in[i + k];
    } else {
      std::memcpy(out.data() + o, in.data() + i, run);  // no zero inside: the caller split
    }
    i += run;
    o += run;
    if (code != 0xFF && i < n) {
      if (o >= out.size()) return -1;
      out[o++] = 0;
    }
  }
  return static_cast<long>(o);
}

std::uint8_t TypeOf(const Message& m) {
  static constexpr std::uint8_t kTypes[] = {
      proto::kIdentify, proto::kSamples, proto::kEvent,     proto::kAck,      proto::kLog,
      proto::kStatus,   proto::kHello,   proto::kSetOutput, proto::kStream,   proto::kPing,
      proto::kSetLimits, proto::kSimShaft, proto::kSimFault};
  return kTypes[m.index()];
}

const char* TypeName(std::uint8_t type) {
  switch (type) {
    case proto::kIdentify: return "identify";
    case proto::kSamples: return "samples";
    case proto::kEvent: return "event";
    case proto::kAck: return "ack";
    case proto::kLog: return "log";
    case proto::kStatus: return "status";
    case proto::kHello: return "hello";
    case proto::kSetOutput: return "set_output";
    case proto::kStream: return "stream";
    case proto::kPing: return "ping";
    case proto::kSetLimits: return "set_limits";
    case proto::kSimShaft: return "sim_shaft";
    case proto::kSimFault: return "sim_fault";
  }
  return "unknown";
}

void EncodeFrame(std::uint16_t seq, std::uint32_t time_us, const Message& msg,
                 std::vector<std::uint8_t>* out) {
  std::vector<std::uint8_t> payload;
  payload.reserve(64);
  Writer w{&payload};
  w.U8(proto::kVersion);
  w.U8(TypeOf(msg));
  w.U16(seq);
  w.U32(time_us);
  EncodeBody(msg, w);
  w.U16(Crc16(payload));
  CobsEncode(payload, out);
  out->push_back(proto::kDelimiter);
}

Result<Frame> DecodePayload(std::span<const std::uint8_t> p, PayloadError* why) {
  Frame f;
  Status s = DecodePayloadInto(p, &f, why);
  if (!s.ok()) return s;
  return f;
}

Status DecodePayloadInto(std::span<const std::uint8_t> p, Frame* out, PayloadError* why) {
  auto fail = [why](PayloadError e, std::string m) -> Status {
    if (why) *why = e;
    return Status::Corruption(std::move(m));
  };
  if (why) *why = PayloadError::kNone;
  if (p.size() < proto::kMinPayload) {
    return fail(PayloadError::kTooShort, std::to_string(p.size()) +
                                             " bytes; expected at least 10 (header and CRC)");
  }
  const std::size_t body_n = p.size() - proto::kMinPayload;
  const std::uint16_t crc_wire =
      static_cast<std::uint16_t>(p[p.size() - 2] | (p[p.size() - 1] << 8));
  const std::uint16_t crc = Crc16(p.first(p.size() - 2));
  if (crc != crc_wire) {
    char buf[96];
    std::snprintf(buf, sizeof buf, "CRC 0x%04X; expected 0x%04X over %zu bytes", crc_wire, crc,
                  p.size() - 2);
    return fail(PayloadError::kBadCrc, buf);
  }
  Reader r{p.data()};
  Frame& f = *out;
  f.header.version = r.U8();
  f.header.type = r.U8();
  f.header.seq = r.U16();
  f.header.time_us = r.U32();
  if (f.header.version != proto::kVersion) {
    return fail(PayloadError::kBadVersion, "protocol version " + std::to_string(f.header.version) +
                                               "; expected " + std::to_string(proto::kVersion));
  }
  const std::uint8_t t = f.header.type;
  if (!KnownType(t)) {
    return fail(PayloadError::kUnknownType, "message type 0x" + [t] {
      char b[8];
      std::snprintf(b, sizeof b, "%02X", t);
      return std::string(b);
    }() + " is not defined in protocol version 1");
  }
  const std::size_t fixed = FixedBody(t);
  auto bad_len = [&](std::size_t expected) {
    return fail(PayloadError::kBadLength, std::string(TypeName(t)) + " body of " +
                                              std::to_string(body_n) + " bytes; expected " +
                                              std::to_string(expected));
  };
  if (fixed && body_n != fixed) return bad_len(fixed);
  switch (t) {
    case proto::kIdentify: {
      IdentifyMsg m;
      m.protocol = r.U8();
      m.fw_major = r.U8();
      m.fw_minor = r.U8();
      m.flags = r.U8();
      m.serial = r.U32();
      m.adc_rate_mhz = r.U32();
      m.tach_resolution_ns = r.U32();
      m.marks_per_rev = r.U8();
      r.U8();
      m.output_full_scale = r.U16();
      m.current_scale = r.F32();
      m.current_offset = r.F32();
      m.voltage_scale = r.F32();
      m.voltage_offset = r.F32();
      m.supply_volts = r.F32();
      m.current_limit_A = r.F32();
      m.locked_limit_ms = r.U16();
      m.watchdog_ms = r.U16();
      m.name = r.Text(proto::kNameSize);
      f.msg = std::move(m);
      break;
    }
    case proto::kSamples: {
      if (body_n < proto::kSamplesHeader) return bad_len(proto::kSamplesHeader);
      if (!std::holds_alternative<SamplesMsg>(f.msg)) f.msg = SamplesMsg{};
      SamplesMsg& m = std::get<SamplesMsg>(f.msg);  // reuses the vectors' capacity
      m.t_base_us = r.U32();
      m.output_level = r.U16();
      const std::size_t na = r.U8(), nm = r.U8();
      const std::size_t want = proto::kSamplesHeader + na * proto::kAdcRecord + nm * proto::kMarkRecord;
      if (body_n != want) return bad_len(want);
      m.adc.resize(na);
      for (AdcRecord& a : m.adc) {
        a.dt_us = r.U16();
        a.current = r.I16();
        a.voltage = r.I16();
      }
      m.marks_dt_us.resize(nm);
      for (std::uint16_t& d : m.marks_dt_us) d = r.U16();
      break;
    }
    case proto::kEvent: {
      EventMsg m;
      m.t_us = r.U32();
      m.code = r.U8();
      m.arg = r.U8();
      m.level = r.U16();
      m.value = r.F32();
      f.msg = m;
      break;
    }
    case proto::kAck: {
      AckMsg m;
      m.cmd_seq = r.U16();
      m.cmd_type = r.U8();
      m.result = r.U8();
      m.detail = r.U32();
      f.msg = m;
      break;
    }
    case proto::kLog: {
      if (body_n < 1 || body_n > 1 + proto::kMaxLogText) return bad_len(1 + proto::kMaxLogText);
      LogMsg m;
      m.severity = r.U8();
      m.text.assign(reinterpret_cast<const char*>(r.p), body_n - 1);
      f.msg = std::move(m);
      break;
    }
    case proto::kStatus: {
      StatusMsg m;
      m.output_level = r.U16();
      m.flags = r.U8();
      r.U8();
      m.frames_dropped = r.U32();
      m.commands = r.U32();
      f.msg = m;
      break;
    }
    case proto::kHello:
      if (body_n != 0) return bad_len(0);
      f.msg = HelloCmd{};
      break;
    case proto::kSetOutput: f.msg = SetOutputCmd{r.U16()}; break;
    case proto::kStream: f.msg = StreamCmd{r.U8() != 0}; break;
    case proto::kPing: f.msg = PingCmd{r.U32()}; break;
    case proto::kSetLimits: {
      SetLimitsCmd m;
      m.current_limit_A = r.F32();
      m.locked_limit_ms = r.U16();
      m.watchdog_ms = r.U16();
      f.msg = m;
      break;
    }
    case proto::kSimShaft: {
      SimShaftCmd m;
      m.hold = r.U8() != 0;
      r.U8();
      m.angle = r.U16();
      f.msg = m;
      break;
    }
    case proto::kSimFault: {
      SimFaultCmd m;
      m.fault = r.U8();
      r.U8();
      r.U8();
      r.U8();
      m.param = r.U32();
      f.msg = m;
      break;
    }
  }
  return Status::Ok();
}

std::string ToHex(std::span<const std::uint8_t> bytes) {
  static const char* kDigits = "0123456789ABCDEF";
  std::string s;
  s.reserve(bytes.size() * 3);
  for (std::size_t k = 0; k < bytes.size(); ++k) {
    if (k) s.push_back(' ');
    s.push_back(kDigits[bytes[k] >> 4]);
    s.push_back(kDigits[bytes[k] & 15]);
  }
  return s;
}

Result<std::vector<std::uint8_t>> FromHex(std::string_view text) {
  std::vector<std::uint8_t> out;
  int line = 1;
  int nibble = -1;
  for (std::size_t k = 0; k < text.size(); ++k) {
    const char c = text[k];
    if (c == '#') {
      while (k < text.size() && text[k] != '\n') ++k;
      --k;
      continue;
    }
    if (c == '\n') ++line;
    if (c == ' ' || c == '\t' || c == '\r' || c == '\n') continue;
    int v = -1;
    if (c >= '0' && c <= '9') v = c - '0';
    if (c >= 'a' && c <= 'f') v = c - 'a' + 10;
    if (c >= 'A' && c <= 'F') v = c - 'A' + 10;
    if (v < 0) {
      return Status::InvalidArgument("line " + std::to_string(line) + ": '" + std::string(1, c) +
                                     "' is not a hex digit; expected pairs like 0A 41");
    }
    if (nibble < 0) {
      nibble = v;
    } else {
      out.push_back(static_cast<std::uint8_t>(nibble << 4 | v));
      nibble = -1;
    }
  }
  if (nibble >= 0) return Status::InvalidArgument("odd number of hex digits; expected whole bytes");
  return out;
}

}  // namespace rb::acquire
