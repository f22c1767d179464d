// rotorbench acquire: cutting a continuous sample stream into runs (the daemon).
//
// Fed time-ordered samples (stream time, SI) and, from rigs, output on/off events, it
// decides where runs begin and end and of what kind:
//   spin-up   when the output switches on (or current/speed rise from rest) and the
//             shaft turns; it ends when the speed holds (two 0.1 s medians within
//             steady_tolerance) → steady;
//   steady    until the output goes off or the current falls to ~0 → coast-down;
//             split every steady_max_s;
//   coast-down until a 0-speed reading (or, without a tach, the back-EMF is gone);
//   locked    when current flows but no speed reading comes within decide_s.
// A run starts preroll_s before its trigger (the samples are kept in a ring while idle;
// idle samples are not stored). Thread-safe: no; one cutter per bench.
#pragma once

#include <deque>
#include <functional>
#include <string>

#include "model/params.h"
#include "model/sample.h"

namespace rb::acquire {

struct CutterOptions {
  double preroll_s = 0.2;          ///< samples kept before a trigger
  double coast_preroll_s = 0.1;    ///< a coast-down repeats this much of the run before it
  double current_on_A = 0.05;      ///< above: current flows
  double current_off_A = 0.02;     ///< below: the circuit is open
  double speed_on_rad_s = 10.0;    ///< above: the shaft turns (≈ 95 rpm)
  double decide_s = 0.1;           ///< current with no speed for this long ⇒ locked
  double steady_tolerance = 0.01;  ///< relative change of the median speed
  double steady_max_s = 60;        ///< a long steady stretch is split into runs this long
  double spinup_max_s = 30;        ///< a spin-up that never settles ends here
  double coast_max_s = 120;        ///< a coast-down that never stops ends here
};

/// Where the cutter's decisions go (the daemon writes them to the database).
struct RunSink {
  std::function<void(model::RunKind kind, double t0, const std::string& why)> begin;
  std::function<void(const model::Sample& s)> add;
  std::function<void(const std::string& reason, double t)> end;
};

class RunCutter {
 public:
  RunCutter(const CutterOptions& o, RunSink sink) : o_(o), sink_(std::move(sink)) {}

  void Feed(const model::Sample& s);
  /// A rig's output switched (its own time stamp, on the stream clock).
  void Output(bool on, double t);
  /// A gap in the data (unplug): the open run stays open; noted by the caller.
  /// Ends the open run (e.g. on shutdown or when the motor changes).
  void Close(const std::string& reason);
  bool in_run() const { return state_ != State::kIdle && state_ != State::kDeciding; }
  model::RunKind kind() const { return kind_; }

 private:
  enum class State { kIdle, kDeciding, kRun };
  void Begin(model::RunKind k, double t0, const std::string& why, double preroll_from);
  void End(const std::string& reason, double t);
  void Switch(model::RunKind k, double t, const std::string& reason, double preroll_s);
  bool Steady(double now) const;

  CutterOptions o_;
  RunSink sink_;
  State state_ = State::kIdle;
  model::RunKind kind_ = model::RunKind::kSpinUp;
  std::deque<model::Sample> ring_;  // recent samples (pre-roll and decisions)
  double run_start_ = 0, trigger_t_ = 0;
  double last_speed_ = 0, last_current_ = 0, last_voltage_ = 0;
  bool have_speed_channel_ = false, have_current_channel_ = false;
  bool saw_speed_ = false;
  std::deque<std::pair<double, double>> speeds_;  // (t, speed) for the steady test
  double rest_since_ = -1;
  bool output_on_ = false;
  bool begun_now_ = false;
};

}  // namespace rb::acquire
