#include "acquire/run_cutter.h"

#include <algorithm>
#include <cmath>
#include <vector>

namespace rb::acquire {
namespace {

double Median(std::vector<double> v) {
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2), v.end());
  return v[v.size() / 2];
}

}  // namespace

void RunCutter::Begin(model::RunKind k, double t0, const std::string& why, double preroll_from) {
  kind_ = k;
  state_ = State::kRun;
  run_start_ = t0;
  speeds_.clear();
  rest_since_ = -1;
  begun_now_ = true;  // the ring (which holds the current sample) is replayed
  sink_.begin(k, preroll_from, why);
  for (const model::Sample& s : ring_) {
    if (s.t >= preroll_from) sink_.add(s);
  }
}

void RunCutter::End(const std::string& reason, double t) {
  if (state_ == State::kRun) sink_.end(reason, t);
  state_ = State::kIdle;
}

void RunCutter::Switch(model::RunKind k, double t, const std::string& reason, double preroll_s) {
  End(reason, t);
  Begin(k, t, reason, t - preroll_s);
}

void RunCutter::Close(const std::string& reason) {
  const double t = ring_.empty() ? 0 : ring_.back().t;
  End(reason, t);
}

bool RunCutter::Steady(double now) const {
  std::vector<double> a, b;
  for (const auto& [t, w] : speeds_) {
    if (t > now - 0.1) {
      a.push_back(w);
    } else if (t > now - 0.2) {
      b.push_back(w);
    }
  }
  if (a.size() < 3 || b.size() < 3) return false;
  const double ma = Median(a), mb = Median(b);
  return ma > o_.speed_on_rad_s && std::fabs(ma - mb) <= o_.steady_tolerance * ma;
}

void RunCutter::Output(bool on, double t) {
  output_on_ = on;
  if (on && state_ == State::kIdle) {
    state_ = State::kDeciding;
    trigger_t_ = t;
  } else if (!on && state_ == State::kRun &&
             (kind_ == model::RunKind::kSpinUp || kind_ == model::RunKind::kSteady)) {
    Switch(model::RunKind::kCoastDown, t, "output off", o_.coast_preroll_s);
  }
}

void RunCutter::Feed(const model::Sample& s) {
  begun_now_ = false;
  ring_.push_back(s);
  while (!ring_.empty() && ring_.front().t < s.t - std::max(o_.preroll_s, o_.decide_s) - 0.5) ring_.pop_front();
  if (model::HasSpeed(s)) {
    have_speed_channel_ = true;
    last_speed_ = s.speed;
    if (s.speed > 0) speeds_.push_back({s.t, s.speed});
    while (!speeds_.empty() && speeds_.front().first < s.t - 0.3) speeds_.pop_front();
  }
  if (model::HasCurrent(s)) {
    have_current_channel_ = true;
    last_current_ = std::fabs(s.current);
  }
  if (model::HasVoltage(s)) last_voltage_ = std::fabs(s.voltage);
  const double t = s.t;
  const bool turning = have_speed_channel_ && last_speed_ > o_.speed_on_rad_s;
  const bool flowing = have_current_channel_ && last_current_ > o_.current_on_A;

  switch (state_) {
    case State::kIdle:
      if (flowing || turning) {
        state_ = State::kDeciding;
        trigger_t_ = t;
      }
      break;
    case State::kDeciding:
      if (turning || (model::HasSpeed(s) && s.speed > 0) || (!have_speed_channel_ && t - trigger_t_ >= o_.decide_s)) {
        Begin(model::RunKind::kSpinUp, trigger_t_, "motion from rest", trigger_t_ - o_.preroll_s);
      } else if (t - trigger_t_ >= o_.decide_s) {
        if (flowing) {
          Begin(model::RunKind::kLocked, trigger_t_, "current without rotation", trigger_t_ - o_.preroll_s);
        } else {
          state_ = State::kIdle;  // a blip
        }
      }
      break;
    case State::kRun:
      switch (kind_) {
        case model::RunKind::kSpinUp:
          if (have_current_channel_ && !output_on_ && last_current_ < o_.current_off_A && t - run_start_ > 0.05 &&
              turning) {
            Switch(model::RunKind::kCoastDown, t, "current fell to zero", o_.coast_preroll_s);
          } else if (t - run_start_ > 0.2 && Steady(t)) {
            Switch(model::RunKind::kSteady, t, "steady speed", 0);
          } else if (t - run_start_ > o_.spinup_max_s) {
            Switch(model::RunKind::kSteady, t, "spin-up time limit", 0);
          }
          break;
        case model::RunKind::kSteady:
          if (have_current_channel_ && !output_on_ && last_current_ < o_.current_off_A) {
            Switch(model::RunKind::kCoastDown, t, "current fell to zero", o_.coast_preroll_s);
          } else if (t - run_start_ > o_.steady_max_s) {
            Switch(model::RunKind::kSteady, t, "steady run split", 0);
          }
          break;
        case model::RunKind::kCoastDown: {
          const bool stopped = have_speed_channel_ ? (model::HasSpeed(s) && s.speed == 0)
                                                   : last_voltage_ < 0.05;
          if (stopped) {
            if (rest_since_ < 0) rest_since_ = t;
            if (t - rest_since_ >= 0.1) End("stopped", t);
          } else if (flowing && t - run_start_ > 0.05) {
            End("output on again", t);
            state_ = State::kDeciding;
            trigger_t_ = t;
          } else if (t - run_start_ > o_.coast_max_s) {
            End("coast-down time limit", t);
          }
          break;
        }
        case model::RunKind::kLocked:
          if (!flowing && last_current_ < o_.current_off_A) {
            if (rest_since_ < 0) rest_since_ = t;
            if (t - rest_since_ >= 0.02) End("current off", t);
          } else if (turning) {
            Switch(model::RunKind::kSpinUp, t, "the shaft turned", 0);
          }
          break;
        default:
          break;
      }
      break;
  }
  if (state_ == State::kRun && !begun_now_) sink_.add(s);
}

}  // namespace rb::acquire
