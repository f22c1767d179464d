// rotorbench bench: timing helpers — medians of repeated runs, and the method header.
#pragma once

#include <algorithm>
#include <cmath>
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

/// One row of the suite's table (scripts/bench collects every line starting with "| ").
struct Row {
  std::string what;      ///< what was measured
  std::string size;      ///< the size of the work
  Stats value;           ///< median and min–max of the repetitions
  std::string unit;
  std::string baseline;  ///< what the baseline is (measured in the same run)
  Stats base;            ///< the baseline's median and min–max
  std::string target;    ///< the goal, in words ("≥ 200 MB/s"); empty = none
  bool met = true;       ///< whether the goal was met
};

inline std::string Num(double x) {
  char b[32];
  std::snprintf(b, sizeof b, std::fabs(x) >= 1000 ? "%.0f" : "%.3g", x);
  return b;
}

/// Prints a markdown table row: what | size | median (min–max) unit | baseline | ratio | goal.
inline void PrintRow(const Row& r) {
  const std::string base = r.base.median != 0
      ? r.baseline + ": " + Num(r.base.median) + " (" + Num(r.base.min) + "–" + Num(r.base.max) + ")"
      : r.baseline;
  const std::string ratio = r.base.median != 0 ? Num(r.value.median / r.base.median) : "–";
  std::printf("| %s | %s | %s (%s–%s) %s | %s | %s | %s%s |\n", r.what.c_str(), r.size.c_str(),
              Num(r.value.median).c_str(), Num(r.value.min).c_str(), Num(r.value.max).c_str(),
              r.unit.c_str(), base.c_str(), ratio.c_str(), r.target.empty() ? "–" : r.target.c_str(),
              r.target.empty() ? "" : (r.met ? " ✔" : " ✘ missed"));
  std::fflush(stdout);
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
