// Rig link protocol: the fixture vectors decode to what vectors.json says, and our
// encoder reproduces the bytes. The .hex files come from fixtures/protocol/make_vectors.py,
// an independent encoder written from firmware-protocol.md (Python's binascii CRC and
// its own COBS), so these tests check the C++ against a second implementation.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include "acquire/decoder.h"
#include "tests/testutil.h"

using namespace rb;
using namespace rb::acquire;
using nlohmann::json;

namespace {

json Vectors() { return json::parse(testing::ReadFile(testing::Fixture("protocol/vectors.json"))); }

std::vector<std::uint8_t> Wire(const std::string& name) {
  auto bytes = FromHex(testing::ReadFile(testing::Fixture("protocol/" + name + ".hex")));
  REQUIRE_MESSAGE(bytes.ok(), bytes.status().message());
  return *bytes;
}

/// Builds our message from the JSON description (the same fields make_vectors.py reads).
Message FromJson(const json& f) {
  const std::string t = f["type"];
  const json& b = f["body"];
  if (t == "hello") return HelloCmd{};
  if (t == "set_output") return SetOutputCmd{b["level"].get<std::uint16_t>()};
  if (t == "stream") return StreamCmd{b["on"].get<int>() != 0};
  if (t == "ping") return PingCmd{b["token"].get<std::uint32_t>()};
  if (t == "set_limits") {
    return SetLimitsCmd{b["current_limit_A"].get<float>(), b["locked_limit_ms"].get<std::uint16_t>(),
                        b["watchdog_ms"].get<std::uint16_t>()};
  }
  if (t == "sim_shaft") return SimShaftCmd{b["hold"].get<int>() != 0, b["angle"].get<std::uint16_t>()};
  if (t == "sim_fault") return SimFaultCmd{b["fault"].get<std::uint8_t>(), b["param"].get<std::uint32_t>()};
  if (t == "identify") {
    IdentifyMsg m;
    m.protocol = b["protocol"];
    m.fw_major = b["fw_major"];
    m.fw_minor = b["fw_minor"];
    m.flags = b["flags"];
    m.serial = b["serial"];
    m.adc_rate_mhz = b["adc_rate_mhz"];
    m.tach_resolution_ns = b["tach_resolution_ns"];
    m.marks_per_rev = b["marks_per_rev"];
    m.output_full_scale = b["output_full_scale"];
    m.current_scale = b["current_scale"];
    m.current_offset = b["current_offset"];
    m.voltage_scale = b["voltage_scale"];
    m.voltage_offset = b["voltage_offset"];
    m.supply_volts = b["supply_volts"];
    m.current_limit_A = b["current_limit_A"];
    m.locked_limit_ms = b["locked_limit_ms"];
    m.watchdog_ms = b["watchdog_ms"];
    m.name = b["name"];
    return m;
  }
  if (t == "samples") {
    SamplesMsg m;
    m.t_base_us = b["t_base_us"];
    m.output_level = b["output_level"];
    json adc = b.contains("adc") ? b["adc"] : json::array();
    if (b.contains("adc_repeat")) {
      for (int k = 0; k < b["adc_repeat"]["count"].get<int>(); ++k) adc.push_back(b["adc_repeat"]["record"]);
    }
    for (const json& a : adc) {
      m.adc.push_back({a[0].get<std::uint16_t>(), a[1].get<std::int16_t>(), a[2].get<std::int16_t>()});
    }
    for (const json& d : b["marks_dt_us"]) m.marks_dt_us.push_back(d.get<std::uint16_t>());
    return m;
  }
  if (t == "event") {
    return EventMsg{b["t_us"], b["code"], b["arg"], b["level"], b["value"].get<float>()};
  }
  if (t == "ack") return AckMsg{b["cmd_seq"], b["cmd_type"], b["result"], b["detail"]};
  if (t == "log") return LogMsg{b["severity"], b["text"]};
  if (t == "status") return StatusMsg{b["output_level"], b["flags"], b["frames_dropped"], b["commands"]};
  FAIL("unknown type in vectors.json: " << t);
  return HelloCmd{};
}

/// Field-by-field equality through the encoder: two messages are equal when they encode
/// to the same bytes (the encoder writes every field).
std::vector<std::uint8_t> Bytes(const Frame& f) {
  std::vector<std::uint8_t> out;
  EncodeFrame(f.header.seq, f.header.time_us, f.msg, &out);
  return out;
}

}  // namespace

TEST_CASE("every protocol test vector decodes to the frames vectors.json describes") {
  const json all = Vectors();  // kept alive: a range-for over a temporary's member dangles
  for (const json& v : all["vectors"]) {
    const std::string name = v["name"];
    CAPTURE(name);
    std::vector<Frame> got;
    FrameDecoder dec([&](const Frame& f, std::int64_t) { got.push_back(f); });
    const std::vector<std::uint8_t> wire = Wire(name);
    dec.Feed(wire);
    // The frames that must survive: every part that is an undamaged frame.
    std::vector<json> expect;
    for (const json& p : v["parts"]) {
      if (p.contains("frame") && !p.contains("corrupt_crc") && !p.contains("cut")) {
        expect.push_back(p["frame"]);
      }
    }
    REQUIRE(got.size() == expect.size());
    for (size_t k = 0; k < got.size(); ++k) {
      CHECK(got[k].header.seq == expect[k]["seq"].get<std::uint16_t>());
      CHECK(got[k].header.time_us == expect[k]["time_us"].get<std::uint32_t>());
      CHECK(TypeName(got[k].header.type) == expect[k]["type"].get<std::string>());
      Frame want{{1, TypeOf(FromJson(expect[k])), expect[k]["seq"], expect[k]["time_us"]},
                 FromJson(expect[k])};
      CHECK(Bytes(got[k]) == Bytes(want));
    }
    const DecoderCounters& c = dec.counters();
    if (v.contains("counters")) {
      const json& e = v["counters"];
      for (auto [key, field] :
           {std::pair{"frames", &c.frames}, std::pair{"bad_crc", &c.bad_crc},
            std::pair{"truncated", &c.truncated}, std::pair{"malformed", &c.malformed},
            std::pair{"seq_gaps", &c.seq_gaps}, std::pair{"frames_lost", &c.frames_lost},
            std::pair{"time_wraps", &c.time_wraps}}) {
        if (e.contains(key)) {
          CAPTURE(key);
          CHECK(*field == e[key].get<std::uint64_t>());
        }
      }
      if (e.contains("garbage_bytes_min")) CHECK(c.garbage_bytes >= e["garbage_bytes_min"].get<std::uint64_t>());
    } else {
      // A clean vector: our encoder must write exactly these bytes, and nothing is rejected.
      CHECK(c.rejected() == 0);
      CHECK(c.garbage_bytes == 0);
      std::vector<std::uint8_t> ours;
      for (const json& p : v["parts"]) {
        EncodeFrame(p["frame"]["seq"], p["frame"]["time_us"], FromJson(p["frame"]), &ours);
      }
      CHECK(ToHex(ours) == ToHex(wire));
    }
  }
}

TEST_CASE("identify vector: fields as the document's worked example states them") {
  // firmware-protocol.md §8, example 2.
  std::vector<Frame> got;
  FrameDecoder dec([&](const Frame& f, std::int64_t) { got.push_back(f); });
  dec.Feed(Wire("identify"));
  REQUIRE(got.size() == 1);
  const auto& m = std::get<IdentifyMsg>(got[0].msg);
  CHECK(m.name == "bench-rig");
  CHECK(m.marks_per_rev == 2);
  CHECK(m.adc_rate_mhz == 2000000u);
  CHECK(m.current_scale == 0.0009765625f);  // 1/1024 A per count
  CHECK(m.current_offset == -0.015625f);
  CHECK(m.flags == (proto::kFlagPwm | proto::kFlagVoltage | proto::kFlagOpenCircuit));
}

TEST_CASE("clock_wrap vector: the host unwraps the 32-bit µs clock") {
  std::vector<std::int64_t> times;
  FrameDecoder dec([&](const Frame&, std::int64_t t) { times.push_back(t); });
  dec.Feed(Wire("clock_wrap"));
  REQUIRE(times.size() == 2);
  CHECK(times[0] == 4294967000LL);
  CHECK(times[1] == 4294967296LL + 204);
}
