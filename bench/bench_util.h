// rotorbench bench: timing helpers — medians of repeated runs, and the method header.
#pragma once

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <string>
#include <thread>
#include <vector>

namespace rb::bench {

struct Stats {
  double median = 0, min = 0, max = 0;
};

inline Stats Summarise(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  Stats s;
  if (v.empty()) return s;
  s.min = v.front();
  s.max = v.back();
  const size_t n = v.size();
  s.median = n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
  return s;
}

/// Seconds taken by fn().
template <typename F>
double TimeIt(F&& fn) {
  const auto t0 = std::chrono::steady_clock::now();
  fn();
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

inline void PrintMethod(const char* what) {
#ifdef NDEBUG
  const char* build = "optimised (NDEBUG)";
#else
  const char* build = "with assertions";
#endif
  std::printf("# %s\n# compiler: %s %s; build: %s; cores: %u\n", what,
#if defined(__clang__)
              "clang", __clang_version__,
#else
              "g++", __VERSION__,
#endif
              build, std::thread::hardware_concurrency());
}

}  // namespace rb::bench
