#include "acquire/calibrate.h"

#include <chrono>
#include <cmath>
#include <optional>

#include "acquire/tach.h"
#include "base/time_util.h"
#include "model/units.h"

namespace rb::acquire {
namespace {

using Clock = std::chrono::steady_clock;

struct Averages {
  double i = 0, v = 0, i_sd = 0, v_sd = 0, w = 0, w_sd = 0;
  std::size_t n = 0, nw = 0;
};

class Checker {
 public:
  Checker(storage::Database& db, ByteSource& port, const CalibrateOptions& o, const CalibrateCallbacks& cb)
      : db_(db), o_(o), cb_(cb), link_(&port) {}

  Result<CalibrateSummary> Run();

 private:
  Status Collect(double seconds, Averages* out);
  Status Drive(double fraction);
  Result<storage::CalibrationRecord> Latest(const std::string& channel);
  Status Store(storage::CalibrationRecord r);
  void Say(const std::string& s) {
    if (cb_.say) cb_.say(s);
  }
  Status Zero();
  Status Shunt();
  Status Tach();

  storage::Database& db_;
  const CalibrateOptions& o_;
  const CalibrateCallbacks& cb_;
  RigLink link_;
  RigInfo info_;
  CalibrateSummary sum_;
  bool driving_ = false;
};

Status Checker::Collect(double seconds, Averages* a) {
  link_.TakeData();  // discard what came before
  std::vector<double> is, vs, ws;
  std::optional<TachTracker> tach;
  const auto until = Clock::now() + std::chrono::duration<double>(seconds);
  auto next_ping = Clock::now();
  while (Clock::now() < until) {
    if (cb_.stop && *cb_.stop) return Status::Interrupted("stopped by the user");
    RB_RETURN_IF_ERROR(link_.Poll(20));
    if (driving_ && Clock::now() >= next_ping) {
      link_.Send(PingCmd{0}).status().ok();
      next_ping = Clock::now() + std::chrono::milliseconds(250);
    }
    RigData d = link_.TakeData();
    for (const RigEvent& e : d.events) {
      if (e.msg.code == proto::kEvOutputOff && e.msg.arg != proto::kCauseHost) {
        driving_ = false;
        return Status::FailedPrecondition("the rig switched the output off (a limit tripped); check the wiring and --current-limit");
      }
    }
    for (const AdcReading& r : d.adc) {
      if (driving_ && std::fabs(r.current) > o_.current_limit_A) {
        link_.Send(SetOutputCmd{0}).status().ok();
        driving_ = false;
        return Status::FailedPrecondition("current " + std::to_string(r.current) + " A above the " +
                                          std::to_string(o_.current_limit_A) + " A limit; output switched off");
      }
      is.push_back(r.current);
      vs.push_back(r.voltage);
    }
    for (std::int64_t m : d.marks_us) {
      if (!tach) tach.emplace(TachOptions{info_.ident.marks_per_rev, 0.25, 0.05}, m * 1e-6);
      std::vector<model::Sample> out;
      tach->Mark(m * 1e-6, &out);
      for (const model::Sample& s : out) {
        if (s.speed > 0) ws.push_back(s.speed);
      }
    }
  }
  auto mean_sd = [](const std::vector<double>& x, double* m, double* sd) {
    double s = 0, ss = 0;
    for (double v : x) s += v;
    *m = x.empty() ? NAN : s / static_cast<double>(x.size());
    for (double v : x) ss += (v - *m) * (v - *m);
    *sd = x.size() > 1 ? std::sqrt(ss / static_cast<double>(x.size() - 1)) : 0;
  };
  mean_sd(is, &a->i, &a->i_sd);
  mean_sd(vs, &a->v, &a->v_sd);
  mean_sd(ws, &a->w, &a->w_sd);
  a->n = is.size();
  a->nw = ws.size();
  if (a->n < 10) return Status::IOError(link_.port()->name() + ": too few samples while averaging");
  return Status::Ok();
}

Status Checker::Drive(double fraction) {
  driving_ = fraction > 0;
  return link_.SetOutput(LevelFor(info_, fraction));
}

Result<storage::CalibrationRecord> Checker::Latest(const std::string& channel) {
  auto r = db_.LatestCalibration(info_.instrument, channel);
  if (!r.ok()) return r.status();
  if (*r) return **r;
  storage::CalibrationRecord identity;  // gain 1, offset 0, no uncertainty claimed
  identity.instrument = info_.instrument;
  identity.channel = channel;
  return identity;
}

Status Checker::Store(storage::CalibrationRecord r) {
  r.instrument = info_.instrument;
  r.created_utc = UtcNowIso();
  r.notes = o_.notes;
  Result<std::int64_t> id = db_.AddCalibration(r);
  if (!id.ok()) return id.status();
  r.id = *id;
  sum_.stored.push_back(r);
  return Status::Ok();
}

Status Checker::Zero() {
  Say("zero: output off; averaging the current channel for " + std::to_string(o_.seconds) + " s");
  RB_RETURN_IF_ERROR(Drive(0));
  Averages a;
  RB_RETURN_IF_ERROR(Collect(o_.seconds, &a));
  Result<storage::CalibrationRecord> prev = Latest("current");
  if (!prev.ok()) return prev.status();
  storage::CalibrationRecord r = *prev;
  r.offset = a.i;
  const double lsb = info_.ident.current_scale;
  r.offset_u = std::sqrt(a.i_sd * a.i_sd / static_cast<double>(a.n) + lsb * lsb / 12.0);
  r.method = "zero: output off, mean of " + std::to_string(a.n) + " current readings";
  return Store(r);
}

Status Checker::Shunt() {
  Result<storage::CalibrationRecord> vcal = Latest("voltage");
  if (!vcal.ok()) return vcal.status();
  const double p_max = std::pow(info_.supply_volts * o_.levels.back(), 2) / o_.ohms;
  Say("shunt: " + std::to_string(o_.ohms) + " ohm in place of the motor; it dissipates up to " +
      std::to_string(p_max) + " W — check its rating");
  // Straight line I_true = a·I_raw + c through the points, by least squares.
  std::vector<double> x, y;
  double u_stat_y = 0;
  // The rig's locked-rotor limit sees no tach marks from a resistor: keep each level's
  // on-time below it, with the output off between levels (this also spares the resistor).
  const double locked_s = info_.ident.locked_limit_ms / 1000.0;
  const double seconds = locked_s > 0 ? std::min(o_.seconds, 0.8 * locked_s - 0.1) : o_.seconds;
  for (double lv : o_.levels) {
    RB_RETURN_IF_ERROR(Drive(lv));
    Averages settle;
    RB_RETURN_IF_ERROR(Collect(0.1, &settle));
    Averages a;
    RB_RETURN_IF_ERROR(Collect(seconds, &a));
    RB_RETURN_IF_ERROR(Drive(0));
    Averages rest;
    RB_RETURN_IF_ERROR(Collect(0.1, &rest));
    const double v_true = vcal->gain * (a.v - vcal->offset);
    x.push_back(a.i);
    y.push_back(v_true / o_.ohms);
    u_stat_y = std::max(u_stat_y, a.v_sd / std::sqrt(static_cast<double>(a.n)) / o_.ohms);
    Say("  level " + std::to_string(lv) + ": current reads " + std::to_string(a.i) + " A, voltage " +
        std::to_string(a.v) + " V → " + std::to_string(v_true / o_.ohms) + " A through the resistor");
  }
  RB_RETURN_IF_ERROR(Drive(0));
  const double n = static_cast<double>(x.size());
  double mx = 0, my = 0;
  for (std::size_t k = 0; k < x.size(); ++k) {
    mx += x[k] / n;
    my += y[k] / n;
  }
  double sxx = 0, sxy = 0;
  for (std::size_t k = 0; k < x.size(); ++k) {
    sxx += (x[k] - mx) * (x[k] - mx);
    sxy += (x[k] - mx) * (y[k] - my);
  }
  if (!(sxx > 0)) return Status::FailedPrecondition("the current readings did not change between levels");
  const double a = sxy / sxx, c = my - a * mx;
  double rss = 0;
  for (std::size_t k = 0; k < x.size(); ++k) rss += std::pow(y[k] - (a * x[k] + c), 2);
  // Residual scatter when there are more points than parameters, else the averaging noise.
  const double s2 = x.size() > 2 ? rss / (n - 2) : u_stat_y * u_stat_y;
  const double u_a = std::sqrt(s2 / sxx), u_c = std::sqrt(s2 * (1.0 / n + mx * mx / sxx));
  storage::CalibrationRecord r;
  r.channel = "current";
  r.gain = a;
  r.offset = -c / a;  // I_true = gain·(raw − offset)
  // Relative gain uncertainty: the fit, the resistor (rectangular ±tolerance), the voltage
  // channel's own gain uncertainty.
  r.gain_u = std::sqrt(std::pow(u_a / a, 2) + std::pow(o_.ohms_tolerance, 2) / 3.0 + std::pow(vcal->gain_u, 2));
  r.offset_u = u_c / std::fabs(a);
  r.method = "shunt: " + std::to_string(o_.ohms) + " ohm ±" + std::to_string(o_.ohms_tolerance * 100) +
             " % against the voltage channel, " + std::to_string(x.size()) + " levels";
  return Store(r);
}

Status Checker::Tach() {
  Say("tach: running at output " + std::to_string(o_.level) + "; compare with the reference " +
      std::to_string(o_.reference_rpm) + " rpm");
  RB_RETURN_IF_ERROR(Drive(o_.level));
  Averages settle;
  RB_RETURN_IF_ERROR(Collect(1.5, &settle));  // spin up (a few mechanical time constants)
  Averages a;
  RB_RETURN_IF_ERROR(Collect(o_.seconds, &a));
  RB_RETURN_IF_ERROR(Drive(0));
  if (a.nw < 10) return Status::FailedPrecondition("too few tach readings; is the motor turning?");
  const double ref = units::RpmToRadPerSec(o_.reference_rpm);
  storage::CalibrationRecord r;
  r.channel = "speed";
  r.gain = ref / a.w;
  const double stat = a.w_sd / std::sqrt(static_cast<double>(a.nw)) / a.w;
  r.gain_u = std::sqrt(o_.reference_u * o_.reference_u + stat * stat);
  r.offset = 0;
  r.method = "tach: mean of " + std::to_string(a.nw) + " readings against a reference of " +
             std::to_string(o_.reference_rpm) + " rpm";
  return Store(r);
}

Result<CalibrateSummary> Checker::Run() {
  Result<RigInfo> info = link_.Identify();
  if (!info.ok()) return info.status();
  info_ = *info;
  sum_.rig = info_;
  RB_RETURN_IF_ERROR(link_.Command(SetLimitsCmd{static_cast<float>(o_.current_limit_A), 0, 1000}).status());
  RB_RETURN_IF_ERROR(link_.Stream(true));
  Status s = o_.check == "zero" ? Zero() : o_.check == "shunt" ? Shunt() : Tach();
  link_.Send(SetOutputCmd{0}).status().ok();  // output off, whatever happened
  link_.Send(StreamCmd{false}).status().ok();
  if (!s.ok()) return s;
  return sum_;
}

}  // namespace

Status ValidateCalibrateOptions(const CalibrateOptions& o) {
  if (o.check != "zero" && o.check != "shunt" && o.check != "tach") {
    return Status::InvalidArgument("calibrate " + o.check + ": expected zero, shunt or tach");
  }
  if (!(o.seconds >= 0.1)) return Status::InvalidArgument("--seconds must be at least 0.1");
  if (o.check == "shunt") {
    if (!(o.ohms > 0)) return Status::InvalidArgument("--ohms: give the precision resistor's value (> 0)");
    if (o.levels.size() < 2) return Status::InvalidArgument("--levels: a shunt check needs at least 2 levels");
    for (double l : o.levels) {
      if (!(l > 0 && l <= 1)) return Status::InvalidArgument("--levels: expected fractions in (0, 1]");
    }
  }
  if (o.check == "tach" && !(o.reference_rpm > 0)) {
    return Status::InvalidArgument("--reference-rpm: give the reference speed (> 0)");
  }
  return Status::Ok();
}

Result<CalibrateSummary> Calibrate(storage::Database& db, ByteSource& port, const CalibrateOptions& o,
                                   const CalibrateCallbacks& cb) {
  RB_RETURN_IF_ERROR(ValidateCalibrateOptions(o));
  Checker c(db, port, o, cb);
  return c.Run();
}

}  // namespace rb::acquire
