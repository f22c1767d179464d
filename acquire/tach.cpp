#include "acquire/tach.h"

#include <algorithm>
#include <numbers>

namespace rb::acquire {

TachTracker::TachTracker(const TachOptions& options, double t0)
    : o_(options),
      pitch_(2.0 * std::numbers::pi / std::max(1, options.marks_per_rev)),
      last_(t0 - options.stop_timeout_s),
      next_zero_(t0) {}

void TachTracker::Advance(double t, std::vector<model::Sample>* out) {
  while (next_zero_ <= t) {
    out->push_back({.t = next_zero_, .speed = 0.0});
    speed_ = 0;
    at_rest_ = true;
    next_zero_ += o_.zero_interval_s;
  }
}

void TachTracker::Mark(double t, std::vector<model::Sample>* out) {
  if (t - last_ > o_.stop_timeout_s) {
    while (next_zero_ < t) {  // zeros strictly before the mark
      out->push_back({.t = next_zero_, .speed = 0.0});
      next_zero_ += o_.zero_interval_s;
    }
    speed_ = 0;
  } else if (have_last_ && t > last_) {
    speed_ = pitch_ / (t - last_);
    out->push_back({.t = t, .speed = speed_});
    at_rest_ = false;
  }
  last_ = t;
  have_last_ = true;
  next_zero_ = t + o_.stop_timeout_s;
}

}  // namespace rb::acquire
