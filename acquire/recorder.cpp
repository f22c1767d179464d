#include "acquire/recorder.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <deque>
#include <nlohmann/json.hpp>

#include "acquire/run_writer.h"
#include "acquire/tach.h"
#include "base/time_util.h"
#include "model/simulate.h"
#include "model/units.h"

namespace rb::acquire {
namespace {

using Clock = std::chrono::steady_clock;
using nlohmann::json;

double Median(std::vector<double> v) {
  if (v.empty()) return NAN;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2), v.end());
  return v[v.size() / 2];
}

std::string Fixed(double v, int digits) {
  char b[48];
  std::snprintf(b, sizeof b, "%.*f", digits, v);
  return b;
}

class Session {
 public:
  Session(storage::Database& db, ByteSource& port, const RecordOptions& o, const RecordCallbacks& cb)
      : db_(db), o_(o), cb_(cb), link_(&port), writer_(&db) {}

  Result<RecordSummary> Run();

 private:
  struct Step {
    std::string name;
    model::RunKind kind;
    double level;
    int position = -1;
  };

  // ---- data path
  Status Pump(int timeout_ms, bool check_stop = true);
  void Process(RigData d);
  void OnEvent(const RigEvent& e);
  void HostTrip(const std::string& why, double t);
  Status Wait(const std::function<bool()>& done, double timeout_s, bool* timed_out);
  Status WaitFor(double seconds) {
    const double until = now_ + seconds;
    bool to = false;
    return Wait([&] { return now_ >= until; }, seconds + 5, &to);
  }
  bool SteadySpeed() const;
  bool CurrentSteady() const;
  Status SetLevel(double fraction);

  // ---- steps
  Status BeginRun(const Step& s);
  Status EndRun(const std::string& reason, storage::RunStatus st = storage::RunStatus::kComplete);
  Status DoLocked(const Step& s);
  Status DoSpinUp(const Step& s);
  Status DoSteady(const Step& s);
  Status DoCoastDown(const Step& s);
  Status Hold(bool hold, int position);
  bool Confirm(const std::string& q) { return cb_.confirm ? cb_.confirm(q) : false; }
  void Say(const std::string& s) {
    if (cb_.say) cb_.say(s);
  }
  void SafeStop(const std::string& why, bool interrupted);

  storage::Database& db_;
  const RecordOptions& o_;
  const RecordCallbacks& cb_;
  RigLink link_;
  RunWriter writer_;
  RigInfo info_;
  RecordSummary summary_;
  double supply_v_ = 0;

  // Stream clock: seconds since the first record, on the rig's clock.
  bool have_base_ = false;
  std::int64_t base_us_ = 0;
  double now_ = 0;
  std::optional<TachTracker> tach_;
  std::deque<std::pair<double, double>> speeds_, currents_;
  double last_i_ = NAN, last_v_ = NAN;
  double level_ = 0;  // output fraction we asked for
  int over_ = 0;
  int marks_in_step_ = 0;
  std::string stop_reason_;  // a trip: the plan stops
  std::string step_name_ = "identify";
  json step_meta_;
  std::uint64_t lost_seen_ = 0;
  Clock::time_point last_data_ = Clock::now(), next_ping_ = Clock::now(), next_live_ = Clock::now(),
                    next_flush_ = Clock::now();
  std::deque<std::pair<Clock::time_point, std::size_t>> rate_;  // ADC readings per pump
};

Status Session::Pump(int timeout_ms, bool check_stop) {
  if (check_stop && cb_.stop && *cb_.stop) return Status::Interrupted("stopped by the user");
  RB_RETURN_IF_ERROR(link_.Poll(timeout_ms));
  RigData d = link_.TakeData();
  const auto now = Clock::now();
  rate_.push_back({now, d.adc.size()});
  while (!rate_.empty() && now - rate_.front().first > std::chrono::seconds(1)) rate_.pop_front();
  if (!d.adc.empty() || !d.marks_us.empty()) last_data_ = now;
  Process(std::move(d));
  if (level_ > 0 && now >= next_ping_) {  // feeds the rig's watchdog while we drive
    link_.Send(PingCmd{0}).status().ok();
    next_ping_ = now + std::chrono::milliseconds(250);
  }
  if (now >= next_flush_) {
    RB_RETURN_IF_ERROR(writer_.Flush());
    next_flush_ = now + std::chrono::milliseconds(200);
  }
  if (cb_.live && now >= next_live_) {
    LiveStatus ls;
    ls.step = step_name_;
    ls.rpm = units::RadPerSecToRpm(tach_ ? tach_->speed() : 0.0);
    ls.amps = last_i_;
    ls.volts = last_v_;
    std::size_t n = 0;
    for (const auto& r : rate_) n += r.second;
    ls.samples_per_s = static_cast<double>(n);
    const DecoderCounters c = link_.counters();
    ls.frames_lost = c.frames_lost;
    ls.bad_frames = c.rejected();
    cb_.live(ls);
    next_live_ = now + std::chrono::milliseconds(250);
  }
  if (now - last_data_ > std::chrono::seconds(3) && tach_) {
    return Status::IOError(link_.port()->name() + ": the rig stopped sending samples for 3 s");
  }
  return Status::Ok();
}

void Session::Process(RigData d) {
  auto secs = [this](std::int64_t us) { return static_cast<double>(us - base_us_) * 1e-6; };
  if (!have_base_) {
    std::int64_t first = INT64_MAX;
    if (!d.adc.empty()) first = std::min(first, d.adc.front().t_us);
    if (!d.marks_us.empty()) first = std::min(first, d.marks_us.front());
    if (first != INT64_MAX) {
      have_base_ = true;
      base_us_ = first;
      tach_.emplace(TachOptions{info_.ident.marks_per_rev, o_.tach_stop_timeout_s, 0.05}, 0.0);
    }
  }
  for (const RigEvent& e : d.events) OnEvent(e);
  if (!tach_) return;
  std::vector<model::Sample> adc, tach;
  adc.reserve(d.adc.size());
  std::size_t ia = 0, im = 0;
  while (ia < d.adc.size() || im < d.marks_us.size()) {
    if (im < d.marks_us.size() && (ia == d.adc.size() || d.marks_us[im] < d.adc[ia].t_us)) {
      const double t = secs(d.marks_us[im++]);
      tach_->Mark(t, &tach);
      ++marks_in_step_;
      now_ = std::max(now_, t);
      continue;
    }
    const AdcReading& a = d.adc[ia++];
    const double t = secs(a.t_us);
    tach_->Advance(t, &tach);
    adc.push_back({.t = t, .current = a.current, .voltage = a.voltage});
    currents_.push_back({t, a.current});
    last_i_ = a.current;
    last_v_ = a.voltage;
    now_ = std::max(now_, t);
    if (level_ > 0 && std::fabs(a.current) > o_.current_limit_A) {
      if (++over_ == 3) {
        HostTrip("host: current " + Fixed(a.current, 2) + " A above the " +
                     Fixed(o_.current_limit_A, 2) + " A limit",
                 t);
      }
    } else {
      over_ = 0;
    }
  }
  for (const model::Sample& s : tach) {
    if (s.speed > 0) speeds_.push_back({s.t, s.speed});
  }
  while (!speeds_.empty() && speeds_.front().first < now_ - 0.5) speeds_.pop_front();
  while (!currents_.empty() && currents_.front().first < now_ - 0.2) currents_.pop_front();
  if (writer_.open()) {
    for (const model::Sample& s : model::MergeReadings(std::move(adc), std::move(tach))) writer_.Add(s);
    const std::uint64_t lost = link_.counters().frames_lost;
    if (lost > lost_seen_) {
      writer_.AddEvent(now_, "gap", std::to_string(lost - lost_seen_) + " frames lost (sequence gap)");
    }
  }
  lost_seen_ = link_.counters().frames_lost;
}

void Session::OnEvent(const RigEvent& e) {
  const double t = have_base_ ? static_cast<double>(e.t_us - base_us_) * 1e-6 : now_;
  const EventMsg& m = e.msg;
  const double fs = std::max<double>(1, info_.ident.output_full_scale);
  std::string kind, detail;
  switch (m.code) {
    case proto::kEvOutputOn:
      kind = "output_on";
      detail = "level " + Fixed(m.level / fs, 3) + " (" + Fixed(supply_v_ * m.level / fs, 2) + " V)";
      break;
    case proto::kEvOutputOff: {
      kind = "output_off";
      static const char* kCause[] = {"host", "current trip", "locked-rotor trip", "watchdog", "button"};
      detail = std::string("cause: ") + (m.arg < 5 ? kCause[m.arg] : "other");
      if (m.arg != proto::kCauseHost && level_ > 0) {
        level_ = 0;
        if (stop_reason_.empty()) stop_reason_ = "the rig switched the output off (" + detail + ")";
      }
      break;
    }
    case proto::kEvLevelChange:
      kind = "output_level";
      detail = "level " + Fixed(m.level / fs, 3);
      break;
    case proto::kEvCurrentTrip:
      kind = "limit_trip";
      detail = "rig: current " + Fixed(m.value, 2) + " A above the " +
               Fixed(std::min<double>(o_.current_limit_A, info_.ident.current_limit_A), 2) + " A limit";
      break;
    case proto::kEvLockedTrip:
      kind = "limit_trip";
      detail = "rig: output on " + Fixed(m.value, 3) + " s without a tach mark";
      break;
    case proto::kEvWatchdogTrip:
      kind = "limit_trip";
      detail = "rig: no host frame for " + Fixed(m.value, 3) + " s (watchdog)";
      break;
    case proto::kEvButton:
      kind = "button";
      detail = "button " + std::to_string(m.arg);
      break;
    case proto::kEvShaft:
      kind = "shaft";
      detail = m.arg ? "held at " + Fixed(m.value, 4) + " turn" : "released";
      break;
    default:
      kind = "rig_event";
      detail = "code " + std::to_string(m.code);
  }
  if (kind == "limit_trip" && stop_reason_.empty()) stop_reason_ = detail;
  if (writer_.open()) writer_.AddEvent(t, kind, detail);
}

void Session::HostTrip(const std::string& why, double t) {
  link_.Send(SetOutputCmd{0}).status().ok();  // at once; the ACK is not waited for here
  level_ = 0;
  if (writer_.open()) writer_.AddEvent(t, "limit_trip", why);
  if (stop_reason_.empty()) stop_reason_ = why;
}

Status Session::Wait(const std::function<bool()>& done, double timeout_s, bool* timed_out) {
  *timed_out = false;
  const double start = now_;
  const auto host_deadline = Clock::now() + std::chrono::duration<double>(timeout_s + 5);
  while (!done()) {
    if (!stop_reason_.empty()) return Status::Ok();
    if (now_ - start > timeout_s || Clock::now() > host_deadline) {
      *timed_out = true;
      return Status::Ok();
    }
    RB_RETURN_IF_ERROR(Pump(20));
  }
  return Status::Ok();
}

bool Session::SteadySpeed() const {
  std::vector<double> a, b;
  for (const auto& [t, w] : speeds_) {
    if (t > now_ - 0.1) {
      a.push_back(w);
    } else if (t > now_ - 0.2) {
      b.push_back(w);
    }
  }
  if (a.size() < 3 || b.size() < 3) return false;
  const double ma = Median(a), mb = Median(b);
  return std::fabs(ma - mb) <= o_.steady_tolerance * ma;
}

bool Session::CurrentSteady() const {
  double sa = 0, sb = 0;
  int na = 0, nb = 0;
  for (const auto& [t, i] : currents_) {
    if (t > now_ - 0.025) {
      sa += i;
      ++na;
    } else if (t > now_ - 0.05) {
      sb += i;
      ++nb;
    }
  }
  if (na < 3 || nb < 3) return false;
  const double ma = sa / na, mb = sb / nb;
  return std::fabs(ma - mb) <= std::max(0.02 * std::fabs(ma), 0.005);
}

Status Session::SetLevel(double fraction) {
  const std::uint16_t lvl = LevelFor(info_, fraction);
  level_ = fraction;
  over_ = 0;
  Status s = link_.SetOutput(lvl);
  if (!s.ok()) level_ = 0;
  return s;
}

Status Session::BeginRun(const Step& s) {
  step_name_ = s.name;
  storage::NewRun nr;
  Result<storage::Motor> motor = db_.FindMotor(o_.motor_label);
  if (!motor.ok()) return motor.status();
  nr.motor_id = motor->id;
  nr.kind = s.kind;
  nr.started_utc = UtcNowIso();
  nr.source = "rig:" + link_.port()->name();
  nr.supply_note = o_.supply_note;
  nr.ambient_note = o_.ambient_note;
  nr.ambient_C = o_.ambient_C;
  nr.nominal_voltage = supply_v_ * s.level;
  const IdentifyMsg& id = info_.ident;
  json meta = {
      {"rig",
       {{"instrument", info_.instrument},
        {"name", id.name},
        {"serial", id.serial},
        {"firmware", std::to_string(id.fw_major) + "." + std::to_string(id.fw_minor)},
        {"protocol", id.protocol},
        {"simulated", info_.simulated},
        {"marks_per_rev", id.marks_per_rev},
        {"adc_rate_hz", info_.adc_rate_hz},
        {"tach_resolution_s", info_.tach_resolution_s},
        {"current_scale_A", id.current_scale},
        {"current_offset_A", id.current_offset},
        {"voltage_scale_V", id.voltage_scale},
        {"voltage_offset_V", id.voltage_offset},
        {"output_full_scale", id.output_full_scale},
        {"limits", {{"current_A", id.current_limit_A}, {"locked_ms", id.locked_limit_ms},
                    {"watchdog_ms", id.watchdog_ms}}}}},
      {"supply_V", supply_v_},
      {"plan", o_.plan},
      {"step", summary_.runs.size() + 1},
      {"step_name", s.name},
      {"output_level", s.level},
      {"rotor_position", s.position >= 0 ? json(s.position) : json(nullptr)},
      {"host_limits", {{"current_A", o_.current_limit_A}, {"max_locked_s", o_.max_locked_s}}},
      {"tach", {{"stop_timeout_s", o_.tach_stop_timeout_s}, {"zero_interval_s", 0.05},
                {"speed_from", "mark periods"}}},
      {"samples", "raw: the rig's nominal scales; calibration is applied when read"},
      {"device_t0_us", base_us_ + std::llround(now_ * 1e6)},
      {"events", "output_on/output_off carry the switching time on the rig's clock"}};
  nr.meta_json = meta.dump();
  RB_RETURN_IF_ERROR(writer_.Begin(nr, now_, {info_.instrument}));
  marks_in_step_ = 0;
  return Status::Ok();
}

Status Session::EndRun(const std::string& reason, storage::RunStatus st) {
  RecordedRun r;
  r.id = writer_.run_id();
  r.step = step_name_;
  Result<storage::Run> run = db_.GetRun(r.id);
  r.kind = run.ok() ? run->kind : model::RunKind::kFree;
  RB_RETURN_IF_ERROR(writer_.Finish(st, reason, now_));
  r.samples = writer_.samples();
  r.duration_s = writer_.last_t();
  r.end_reason = reason;
  summary_.runs.push_back(r);
  Say("  " + r.step + ": run " + std::to_string(r.id) + ", " + std::to_string(r.samples) +
      " samples, " + Fixed(r.duration_s, 2) + " s, ended: " + reason);
  return Status::Ok();
}

Status Session::Hold(bool hold, int position) {
  // Simulated rigs only: the simulated hand. Positions are a fraction of a turn apart.
  const double turns = 0.07 * std::max(0, position);
  const auto angle = static_cast<std::uint16_t>(std::lround(std::fmod(turns, 1.0) * 65536.0) & 0xFFFF);
  return link_.Command(SimShaftCmd{hold, angle}).status();
}

Status Session::DoLocked(const Step& s) {
  RB_RETURN_IF_ERROR(BeginRun(s));
  RB_RETURN_IF_ERROR(WaitFor(0.05));
  marks_in_step_ = 0;
  RB_RETURN_IF_ERROR(SetLevel(s.level));
  const double t_on = now_;
  bool to = false;
  RB_RETURN_IF_ERROR(Wait(
      [&] {
        return (now_ - t_on >= o_.locked_min_s && CurrentSteady()) || now_ - t_on >= o_.max_locked_s ||
               marks_in_step_ > 1;
      },
      o_.max_locked_s + 1, &to));
  std::string reason = "current steady";
  if (marks_in_step_ > 1 && stop_reason_.empty()) {
    stop_reason_ = "the shaft turned during a locked-rotor pulse; is it really held?";
  }
  if (!stop_reason_.empty()) {
    reason = stop_reason_;
  } else if (now_ - t_on >= o_.max_locked_s) {
    reason = "locked-rotor time limit";
    writer_.AddEvent(now_, "limit_trip", "host: locked-rotor time " + Fixed(o_.max_locked_s, 3) + " s reached");
  }
  RB_RETURN_IF_ERROR(SetLevel(0));
  const double on_time = now_ - t_on;
  RB_RETURN_IF_ERROR(WaitFor(0.05));
  RB_RETURN_IF_ERROR(EndRun(reason));
  if (stop_reason_.empty()) RB_RETURN_IF_ERROR(WaitFor(o_.cool_factor * on_time));  // cooling
  return Status::Ok();
}

Status Session::DoSpinUp(const Step& s) {
  bool to = false;
  step_name_ = s.name + " (waiting for rest)";
  RB_RETURN_IF_ERROR(Wait([&] { return tach_ && tach_->at_rest(); }, o_.rest_timeout_s, &to));
  if (to) {
    return Status::FailedPrecondition("the shaft is still turning after " + Fixed(o_.rest_timeout_s, 0) +
                                      " s; a spin-up must start from rest");
  }
  RB_RETURN_IF_ERROR(BeginRun(s));
  RB_RETURN_IF_ERROR(WaitFor(o_.pre_s));
  RB_RETURN_IF_ERROR(SetLevel(s.level));
  const double t_on = now_;
  RB_RETURN_IF_ERROR(Wait([&] { return now_ - t_on >= 0.2 && SteadySpeed(); }, o_.spinup_timeout_s, &to));
  return EndRun(!stop_reason_.empty() ? stop_reason_ : to ? "timeout (speed not steady)" : "steady speed");
}

Status Session::DoSteady(const Step& s) {
  RB_RETURN_IF_ERROR(BeginRun(s));
  RB_RETURN_IF_ERROR(WaitFor(o_.steady_hold_s));
  return EndRun(!stop_reason_.empty() ? stop_reason_ : "held " + Fixed(o_.steady_hold_s, 2) + " s");
}

Status Session::DoCoastDown(const Step& s) {
  RB_RETURN_IF_ERROR(BeginRun(s));
  RB_RETURN_IF_ERROR(WaitFor(o_.pre_s));
  RB_RETURN_IF_ERROR(SetLevel(0));
  double rest_at = -1;
  bool to = false;
  RB_RETURN_IF_ERROR(Wait(
      [&] {
        if (tach_->at_rest() && rest_at < 0) rest_at = now_;
        return rest_at >= 0 && now_ - rest_at >= o_.stop_tail_s;
      },
      o_.coast_timeout_s, &to));
  return EndRun(!stop_reason_.empty() ? stop_reason_ : to ? "timeout (still turning)" : "stopped");
}

void Session::SafeStop(const std::string& why, bool interrupted) {
  // Output off first, whatever else happens.
  link_.Send(SetOutputCmd{0}).status().ok();
  level_ = 0;
  if (writer_.open()) {
    // Keep the samples through the switch-off (0.3 s), then close the run.
    const auto until = Clock::now() + std::chrono::milliseconds(300);
    while (Clock::now() < until && Pump(20, false).ok()) {
    }
    if (interrupted) writer_.AddEvent(now_, "interrupted", why);
    EndRun(why, storage::RunStatus::kInterrupted).ok();
  }
}

Result<RecordSummary> Session::Run() {
  Result<RigInfo> info = link_.Identify();
  if (!info.ok()) return info.status();
  info_ = *info;
  summary_.rig = info_;
  supply_v_ = o_.supply_volts.value_or(info_.supply_volts);
  if (!(supply_v_ > 0)) {
    return Status::InvalidArgument(link_.port()->name() + ": the rig does not report its supply "
                                   "voltage; give --supply-volts V (the bench supply setting)");
  }
  Say("rig: " + info_.instrument + " (firmware " + std::to_string(info_.ident.fw_major) + "." +
      std::to_string(info_.ident.fw_minor) + (info_.simulated ? ", simulated" : "") + "), " +
      Fixed(info_.adc_rate_hz, 0) + " Hz, " + std::to_string(info_.ident.marks_per_rev) +
      " marks/rev, supply " + Fixed(supply_v_, 2) + " V");

  // The plan.
  std::vector<Step> steps;
  const bool standard = o_.plan == "standard";
  bool locked = standard && !o_.skip_locked;
  bool spin = true;
  if (locked && !o_.shaft_held) {
    if (o_.assume_yes) {
      locked = false;
      summary_.skipped.push_back("locked-rotor pulses: they need the shaft held (confirm with --shaft-held)");
    } else if (!Confirm("Locked-rotor pulses: clamp the shaft so it cannot turn (the rig will pass "
                        "current through a stalled winding, briefly). Is the shaft held?")) {
      locked = false;
      summary_.skipped.push_back("locked-rotor pulses: the shaft was not held");
    }
  }
  int positions = std::max(1, o_.locked_positions);
  if (locked && o_.assume_yes && !info_.simulated) {
    if (positions > 1) {
      summary_.skipped.push_back("locked-rotor positions 2.." + std::to_string(positions) +
                                 ": turning the shaft needs hands (run without --yes)");
    }
    positions = 1;
    spin = false;  // the shaft stays held: nobody is there to release it
    summary_.skipped.push_back("spin-ups and coast-downs: the shaft is held (run again without --shaft-held)");
  }
  if (locked) {
    for (int p = 0; p < positions; ++p) {
      for (double lv : o_.locked_levels) {
        steps.push_back({"locked-p" + std::to_string(p + 1) + "-" + Fixed(lv, 2), model::RunKind::kLocked, lv, p});
      }
    }
  }
  if (spin) {
    const std::vector<double> levels = standard ? o_.levels : std::vector<double>{o_.levels.back()};
    int k = 0;
    for (double lv : levels) {
      ++k;
      const std::string n = std::to_string(k);
      steps.push_back({"spinup-" + n, model::RunKind::kSpinUp, lv});
      if (standard) steps.push_back({"steady-" + n, model::RunKind::kSteady, lv});
      steps.push_back({"coastdown-" + n, model::RunKind::kCoastDown, lv});
    }
  }

  RB_RETURN_IF_ERROR(link_.Command(SetLimitsCmd{static_cast<float>(o_.current_limit_A),
                                                static_cast<std::uint16_t>(std::lround(o_.max_locked_s * 1000 + 100)),
                                                1000})
                         .status());
  RB_RETURN_IF_ERROR(link_.Stream(true));
  for (auto until = Clock::now() + std::chrono::seconds(2); !tach_;) {  // the clock starts here
    if (Clock::now() > until) {
      return Status::IOError(link_.port()->name() + ": the rig sends no samples after STREAM on");
    }
    RB_RETURN_IF_ERROR(Pump(20));
  }

  Status s;
  bool held = false;
  int last_position = -1;
  for (const Step& step : steps) {
    if (!stop_reason_.empty()) break;
    if (step.kind == model::RunKind::kLocked && step.position != last_position) {
      if (info_.simulated) {
        s = Hold(true, step.position);
      } else if (step.position > 0 && !Confirm("Turn the shaft about 1/" + std::to_string(positions * 2) +
                                               " turn and clamp it again. Ready?")) {
        summary_.skipped.push_back("locked-rotor position " + std::to_string(step.position + 1));
        continue;
      }
      if (!s.ok()) break;
      held = true;
      last_position = step.position;
    }
    if (step.kind != model::RunKind::kLocked && held) {
      if (info_.simulated) {
        s = Hold(false, 0);
      } else if (!Confirm("Release the shaft and keep clear: the motor will spin up. Ready?")) {
        summary_.skipped.push_back("spin-ups and coast-downs: not released");
        break;
      }
      if (!s.ok()) break;
      held = false;
    }
    switch (step.kind) {
      case model::RunKind::kLocked: s = DoLocked(step); break;
      case model::RunKind::kSpinUp: s = DoSpinUp(step); break;
      case model::RunKind::kSteady: s = DoSteady(step); break;
      default: s = DoCoastDown(step); break;
    }
    if (!s.ok()) break;
  }
  if (!s.ok()) {
    const bool interrupted = s.code() == Code::kInterrupted;
    SafeStop(interrupted ? "interrupted by the user (Ctrl-C)" : s.message(), interrupted);
    summary_.interrupted = interrupted;
    if (!interrupted) {
      summary_.counters = link_.counters();
      return s;
    }
  } else {
    link_.Send(SetOutputCmd{0}).status().ok();
    if (held && info_.simulated) Hold(false, 0).ok();
  }
  link_.Send(StreamCmd{false}).status().ok();
  summary_.stopped = stop_reason_;
  summary_.counters = link_.counters();
  return summary_;
}

}  // namespace

Status ValidateRecordOptions(const RecordOptions& o) {
  if (o.plan != "standard" && o.plan != "quick") {
    return Status::InvalidArgument("--plan " + o.plan + ": unknown plan; expected standard or quick");
  }
  auto fractions = [](const std::vector<double>& v, const char* opt) -> Status {
    if (v.empty()) return Status::InvalidArgument(std::string(opt) + ": expected at least one level");
    for (double x : v) {
      if (!(x > 0 && x <= 1)) {
        return Status::InvalidArgument(std::string(opt) + " " + std::to_string(x) +
                                       ": expected output fractions in (0, 1]");
      }
    }
    return Status::Ok();
  };
  RB_RETURN_IF_ERROR(fractions(o.levels, "--levels"));
  RB_RETURN_IF_ERROR(fractions(o.locked_levels, "--locked-levels"));
  if (o.plan == "standard" && o.levels.size() < 2) {
    return Status::InvalidArgument("--levels: the standard plan needs at least 2 output levels");
  }
  if (o.plan == "standard" && !o.skip_locked && o.locked_levels.size() < 2) {
    return Status::InvalidArgument("--locked-levels: the standard plan needs at least 2 levels");
  }
  if (!(o.current_limit_A > 0)) return Status::InvalidArgument("--current-limit must be > 0 A");
  if (!(o.max_locked_s > 0 && o.max_locked_s <= 5)) {
    return Status::InvalidArgument("--max-locked must be in (0, 5] s; locked-rotor pulses heat the winding fast");
  }
  if (o.locked_positions < 1 || o.locked_positions > 12) {
    return Status::InvalidArgument("--locked-positions must be 1 to 12");
  }
  return Status::Ok();
}

Result<RecordSummary> Record(storage::Database& db, ByteSource& port, const RecordOptions& options,
                             const RecordCallbacks& callbacks) {
  RB_RETURN_IF_ERROR(ValidateRecordOptions(options));
  Result<storage::Motor> motor = db.FindMotor(options.motor_label);
  if (!motor.ok()) return motor.status().WithPrefix("--motor " + options.motor_label);
  Session s(db, port, options, callbacks);
  return s.Run();
}

}  // namespace rb::acquire
