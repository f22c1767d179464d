// Rig link codec and streaming decoder: CRC and COBS against published check values,
// and a decoder that survives garbage, splits, truncation, bad CRCs, gaps and wraps
// without crashing or inventing frames.
#include <doctest/doctest.h>

#include <random>

#include "acquire/decoder.h"

using namespace rb;
using namespace rb::acquire;

namespace {
std::vector<std::uint8_t> B(std::initializer_list<int> v) {
  std::vector<std::uint8_t> out;
  for (int x : v) out.push_back(static_cast<std::uint8_t>(x));
  return out;
}
std::vector<std::uint8_t> Cobs(const std::vector<std::uint8_t>& in) {
  std::vector<std::uint8_t> out;
  CobsEncode(in, &out);
  return out;
}
std::vector<std::uint8_t> Uncobs(const std::vector<std::uint8_t>& in) {
  std::vector<std::uint8_t> out(4096);
  const long n = CobsDecode(in, out);
  REQUIRE(n >= 0);
  out.resize(static_cast<size_t>(n));
  return out;
}
SamplesMsg Batch(std::uint32_t t_base, int n) {
  SamplesMsg m;
  m.t_base_us = t_base;
  for (int k = 0; k < n; ++k) {
    m.adc.push_back({static_cast<std::uint16_t>(k * 500), static_cast<std::int16_t>(k),
                     static_cast<std::int16_t>(-k)});
  }
  m.marks_dt_us = {17, 0x1100, 0x1300};  // XON/XOFF byte values inside a frame
  return m;
}
}  // namespace

TEST_CASE("CRC-16/IBM-3740 check value") {
  // Check value of the CRC catalogue entry CRC-16/IBM-3740 (a.k.a. CCITT-FALSE):
  // CRC("123456789") = 0x29B1 (from memory; the same value comes out of Python's
  // binascii.crc_hqx(b"123456789", 0xFFFF), checked when the protocol was written).
  const std::string s = "123456789";
  CHECK(Crc16({reinterpret_cast<const std::uint8_t*>(s.data()), s.size()}) == proto::kCrcCheck);
  CHECK(proto::kCrcCheck == 0x29B1);
  CHECK(Crc16({}) == 0xFFFF);  // init, nothing processed
}

TEST_CASE("COBS encodes the textbook examples and decodes them back") {
  // Examples of Cheshire & Baker's consistent-overhead byte stuffing as commonly
  // tabulated (from memory): zero bytes become code bytes, a 254-byte run takes code FF.
  CHECK(Cobs(B({0x00})) == B({0x01, 0x01}));
  CHECK(Cobs(B({0x00, 0x00})) == B({0x01, 0x01, 0x01}));
  CHECK(Cobs(B({0x11, 0x22, 0x00, 0x33})) == B({0x03, 0x11, 0x22, 0x02, 0x33}));
  CHECK(Cobs(B({0x11, 0x22, 0x33, 0x44})) == B({0x05, 0x11, 0x22, 0x33, 0x44}));
  CHECK(Cobs(B({0x11, 0x00, 0x00, 0x00})) == B({0x02, 0x11, 0x01, 0x01, 0x01}));
  std::vector<std::uint8_t> run254, run255;
  for (int k = 1; k <= 254; ++k) run254.push_back(static_cast<std::uint8_t>(k));
  for (int k = 1; k <= 255; ++k) run255.push_back(static_cast<std::uint8_t>(k));
  std::vector<std::uint8_t> want254 = {0xFF};
  want254.insert(want254.end(), run254.begin(), run254.end());
  CHECK(Cobs(run254) == want254);  // no trailing code byte after a full final block
  std::vector<std::uint8_t> want255 = want254;
  want255.push_back(0x02);
  want255.push_back(0xFF);
  CHECK(Cobs(run255) == want255);
  std::mt19937 rng(7);
  for (int trial = 0; trial < 200; ++trial) {
    std::vector<std::uint8_t> v(rng() % 700);
    for (auto& x : v) x = static_cast<std::uint8_t>(rng() % 3 == 0 ? 0 : rng());
    const auto enc = Cobs(v);
    CHECK(std::find(enc.begin(), enc.end(), 0) == enc.end());
    CHECK(Uncobs(enc) == v);
  }
}

TEST_CASE("a stream split at every byte gives the same frames as one piece") {
  std::vector<std::uint8_t> wire;
  for (int k = 0; k < 5; ++k) EncodeFrame(static_cast<std::uint16_t>(k), 1000u * k, Batch(1000u * k, 20), &wire);
  std::vector<SamplesMsg> whole, split;
  FrameDecoder a([&](const Frame& f, std::int64_t) { whole.push_back(std::get<SamplesMsg>(f.msg)); });
  FrameDecoder b([&](const Frame& f, std::int64_t) { split.push_back(std::get<SamplesMsg>(f.msg)); });
  a.Feed(wire);
  for (std::uint8_t x : wire) b.Feed({&x, 1});
  REQUIRE(whole.size() == 5);
  REQUIRE(split.size() == 5);
  for (int k = 0; k < 5; ++k) {
    CHECK(split[k].t_base_us == 1000u * k);
    CHECK(split[k].adc.size() == 20);
    CHECK(split[k].adc[19].voltage == -19);
    CHECK(split[k].marks_dt_us == std::vector<std::uint16_t>{17, 0x1100, 0x1300});
  }
}

TEST_CASE("random garbage between frames: every good frame comes out, nothing is invented") {
  std::mt19937 rng(12345);
  std::vector<std::uint8_t> wire;
  const int kFrames = 400;
  std::uint64_t garbage = 0;
  for (int k = 0; k < kFrames; ++k) {
    if (k % 3 == 0) {
      const int n = 1 + static_cast<int>(rng() % 64);
      for (int j = 0; j < n; ++j) {
        const auto x = static_cast<std::uint8_t>(rng());
        wire.push_back(x);
        garbage += x != 0;  // zeros are delimiters, not garbage
      }
      wire.push_back(0);  // garbage then a delimiter: the decoder resynchronises here
    }
    EncodeFrame(static_cast<std::uint16_t>(k), 500u * k, Batch(500u * k, k % 30), &wire);
  }
  std::vector<std::uint16_t> seqs;
  FrameDecoder dec([&](const Frame& f, std::int64_t) { seqs.push_back(f.header.seq); });
  // Feed in random-sized pieces, as a serial port would deliver them.
  for (size_t at = 0; at < wire.size();) {
    const size_t n = std::min<size_t>(wire.size() - at, 1 + rng() % 300);
    dec.Feed({wire.data() + at, n});
    at += n;
  }
  REQUIRE(seqs.size() == static_cast<size_t>(kFrames));
  for (int k = 0; k < kFrames; ++k) CHECK(seqs[static_cast<size_t>(k)] == k);
  const DecoderCounters& c = dec.counters();
  CHECK(c.frames == static_cast<std::uint64_t>(kFrames));
  CHECK(c.seq_gaps == 0);
  CHECK(c.garbage_bytes == garbage);  // every garbage byte counted, no frame byte
  CHECK(c.rejected() > 0);
}

TEST_CASE("pure noise never crashes and yields no frame") {
  std::mt19937 rng(99);
  int frames = 0;
  FrameDecoder dec([&](const Frame&, std::int64_t) { ++frames; });
  std::vector<std::uint8_t> noise(1 << 20);
  for (auto& x : noise) x = static_cast<std::uint8_t>(rng());
  dec.Feed(noise);
  CHECK(frames == 0);
  CHECK(dec.counters().garbage_bytes > 1000000);
}

TEST_CASE("each kind of damage moves its own counter") {
  std::vector<std::uint8_t> good;
  EncodeFrame(1, 10, PingCmd{1}, &good);
  SUBCASE("bad CRC") {
    auto w = good;
    w[3] ^= 0x40;  // a payload bit flipped in transit
    FrameDecoder dec([](const Frame&, std::int64_t) { FAIL("a damaged frame came out"); });
    dec.Feed(w);
    CHECK(dec.counters().bad_crc == 1);
    CHECK(dec.last_error().find("frame 1: CRC") == 0);
  }
  SUBCASE("truncated: the tail lost, delimiter kept") {
    std::vector<std::uint8_t> w(good.begin(), good.end() - 3);
    w.push_back(0);
    FrameDecoder dec([](const Frame&, std::int64_t) { FAIL("a damaged frame came out"); });
    dec.Feed(w);
    CHECK(dec.counters().truncated == 1);
  }
  SUBCASE("over-long frame: skipped up to the next delimiter, then decoding resumes") {
    std::vector<std::uint8_t> w(5000, 0x42);
    w.push_back(0);
    w.insert(w.end(), good.begin(), good.end());
    int n = 0;
    FrameDecoder dec([&](const Frame&, std::int64_t) { ++n; });
    dec.Feed(w);
    CHECK(dec.counters().malformed == 1);
    CHECK(n == 1);
  }
  SUBCASE("another protocol version and an unknown type") {
    std::vector<std::uint8_t> payload = {2, 0x44, 1, 0, 10, 0, 0, 0, 1, 0, 0, 0};
    const std::uint16_t crc = Crc16(payload);
    payload.push_back(static_cast<std::uint8_t>(crc));
    payload.push_back(static_cast<std::uint8_t>(crc >> 8));
    std::vector<std::uint8_t> w;
    CobsEncode(payload, &w);
    w.push_back(0);
    std::vector<std::uint8_t> p2 = {1, 0x30, 1, 0, 10, 0, 0, 0};
    const std::uint16_t crc2 = Crc16(p2);
    p2.push_back(static_cast<std::uint8_t>(crc2));
    p2.push_back(static_cast<std::uint8_t>(crc2 >> 8));
    CobsEncode(p2, &w);
    w.push_back(0);
    FrameDecoder dec([](const Frame&, std::int64_t) { FAIL("a foreign frame came out"); });
    dec.Feed(w);
    CHECK(dec.counters().bad_version == 1);
    CHECK(dec.counters().unknown_type == 1);
  }
  SUBCASE("a samples body whose counts disagree with its length") {
    // Header, then a samples body that claims 4 ADC records ...
    std::vector<std::uint8_t> payload = B({1, proto::kSamples, 0, 0, 0, 0, 0, 0,  //
                                           0, 0, 0, 0, 0, 0, 4, 0});
    for (int k = 0; k < 3 * 6; ++k) payload.push_back(1);    // but carries 3
    const std::uint16_t crc = Crc16(payload);
    payload.push_back(static_cast<std::uint8_t>(crc));
    payload.push_back(static_cast<std::uint8_t>(crc >> 8));
    std::vector<std::uint8_t> w;
    CobsEncode(payload, &w);
    w.push_back(0);
    FrameDecoder dec([](const Frame&, std::int64_t) { FAIL("a malformed frame came out"); });
    dec.Feed(w);
    CHECK(dec.counters().malformed == 1);
    CHECK(dec.last_error().find("samples body of 26 bytes; expected 32") != std::string::npos);
  }
}

TEST_CASE("sequence gaps count the frames lost, a jump back counts as a reset") {
  std::vector<std::uint8_t> w;
  for (int s : {65533, 65534, 65535, 0, 1, 5, 6, 2}) EncodeFrame(static_cast<std::uint16_t>(s), 0, PingCmd{0}, &w);
  FrameDecoder dec([](const Frame&, std::int64_t) {});
  dec.Feed(w);
  const DecoderCounters& c = dec.counters();
  CHECK(c.frames == 8);
  CHECK(c.seq_gaps == 1);     // 1 → 5 (65535 → 0 is no gap)
  CHECK(c.frames_lost == 3);  // 2, 3, 4
  CHECK(c.seq_resets == 1);   // 6 → 2
}

TEST_CASE("time unwrapping across several wraps and slightly out-of-order times") {
  TimeUnwrapper u;
  std::int64_t expect = 4294960000LL;
  CHECK(u.Unwrap(static_cast<std::uint32_t>(expect)) == expect);
  for (int k = 0; k < 3 * 4294; ++k) {  // 1 s steps: 4 294 967 296 µs per wrap
    expect += 1000000;
    CHECK(u.Unwrap(static_cast<std::uint32_t>(expect)) == expect);
    // A body time 300 µs earlier than the header time is unwrapped backwards, not forward.
    CHECK(u.Unwrap(static_cast<std::uint32_t>(expect - 300)) == expect - 300);
  }
  CHECK(u.wraps() == 3);
}
