// Rig link decoder throughput: MB/s of wire bytes decoded into frames, against memcpy of
// the same bytes in the same run (the baseline), for a clean stream and one with 10 %
// garbage. Not a test: run it by hand (`build/bench/decoder_bench`).
#include <cstring>
#include <random>

#include "acquire/decoder.h"
#include "bench/bench_util.h"

using namespace rb;
using namespace rb::acquire;

namespace {

std::vector<std::uint8_t> CleanStream(std::size_t target, std::size_t* frames) {
  std::vector<std::uint8_t> w;
  std::mt19937 rng(1);
  std::uint32_t t = 0;
  std::uint16_t seq = 0;
  *frames = 0;
  while (w.size() < target) {
    SamplesMsg m;  // a typical frame: 10 ms at 2 kHz, a few tach marks
    m.t_base_us = t;
    m.output_level = 1000;
    for (int k = 0; k < 20; ++k) {
      m.adc.push_back({static_cast<std::uint16_t>(k * 500), static_cast<std::int16_t>(rng() % 4000),
                       static_cast<std::int16_t>(rng() % 2000)});
    }
    for (int k = 0; k < 3; ++k) m.marks_dt_us.push_back(static_cast<std::uint16_t>(rng() % 10000));
    EncodeFrame(seq++, t, m, &w);
    t += 10000;
    ++*frames;
  }
  return w;
}

std::vector<std::uint8_t> WithGarbage(const std::vector<std::uint8_t>& clean) {
  // After every frame, random garbage so that it makes up 10 % of the bytes, then a
  // delimiter (the decoder resynchronises there).
  std::vector<std::uint8_t> w;
  std::mt19937 rng(2);
  double owed = 0;
  for (std::uint8_t b : clean) {
    w.push_back(b);
    owed += 1.0 / 9.0;
    if (b == 0 && owed >= 1) {
      for (; owed >= 1; owed -= 1) w.push_back(static_cast<std::uint8_t>(1 + rng() % 255));
      w.push_back(0);
    }
  }
  return w;
}

double Decode(const std::vector<std::uint8_t>& w, std::size_t* frames, std::size_t* samples) {
  std::size_t f = 0, s = 0;
  FrameDecoder dec([&](const Frame& fr, std::int64_t) {
    ++f;
    if (const auto* m = std::get_if<SamplesMsg>(&fr.msg)) s += m->adc.size();
  });
  const double secs = bench::TimeIt([&] {
    for (std::size_t at = 0; at < w.size(); at += 4096) {  // serial-read sized pieces
      dec.Feed({w.data() + at, std::min<std::size_t>(4096, w.size() - at)});
    }
  });
  *frames = f;
  *samples = s;
  return secs;
}

}  // namespace

int main() {
  bench::PrintMethod(
      "rig link decoder: COBS + CRC-16 + parse, fed in 4096-byte pieces; baseline: memcpy of the "
      "same bytes; 64 MiB per pass, 7 passes, median (min-max) MB/s (1 MB = 1e6 bytes)");
  std::size_t frames_built = 0;
  const std::vector<std::uint8_t> clean = CleanStream(64u << 20, &frames_built);
  const std::vector<std::uint8_t> dirty = WithGarbage(clean);
  std::vector<std::uint8_t> copy(dirty.size());
  for (const auto* w : {&clean, &dirty}) {
    std::vector<double> mb_dec, mb_cpy;
    std::size_t frames = 0, samples = 0;
    for (int r = 0; r < 7; ++r) {
      const double tc = bench::TimeIt([&] { std::memcpy(copy.data(), w->data(), w->size()); });
      mb_cpy.push_back(static_cast<double>(w->size()) / tc / 1e6);
      mb_dec.push_back(static_cast<double>(w->size()) / Decode(*w, &frames, &samples) / 1e6);
    }
    const bench::Stats d = bench::Summarise(mb_dec), c = bench::Summarise(mb_cpy);
    std::printf("%-18s %8.1f MB/s (%.1f-%.1f)  memcpy %8.1f MB/s (%.1f-%.1f)  ratio %.3f  frames %zu/%zu  "
                "samples/s %.3g\n",
                w == &clean ? "clean stream" : "10 % garbage", d.median, d.min, d.max, c.median, c.min, c.max,
                d.median / c.median, frames, frames_built,
                d.median * 1e6 / static_cast<double>(w->size()) * static_cast<double>(samples));
    const bool clean_stream = w == &clean;
    bench::PrintRow({clean_stream ? "1. frame decoding, valid frames" : "1. frame decoding, 10 % garbage",
                     "64 MiB × 7", d, "MB/s", "memcpy of the same bytes", c,
                     clean_stream ? "≥ 200 MB/s" : "", d.median >= 200});
  }
  return 0;
}
