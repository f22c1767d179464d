#include "acquire/daemon.h"

#include <fcntl.h>
#include <poll.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <deque>
#include <filesystem>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <thread>

#include "acquire/byte_source.h"
#include "acquire/rig_link.h"
#include "acquire/run_writer.h"
#include "acquire/tach.h"
#include "acquire/toml_util.h"
#include "base/text.h"
#include "base/time_util.h"
#include "storage/storage.h"

namespace rb::acquire {
namespace {

using Clock = std::chrono::steady_clock;
using nlohmann::json;

struct PortStats {
  bool connected = false;
  std::string instrument;  // rig: NAME#SERIAL; text: the map's name
  std::uint64_t bytes = 0, frames = 0, frames_lost = 0, bad_frames = 0, garbage_bytes = 0;
  std::uint64_t samples = 0, lines = 0, bad_lines = 0, reconnects = 0, gaps = 0;
  double samples_per_s = 0;
  std::string last_error;
};

struct Item {
  enum Kind { kSample, kOutput, kConnect, kDisconnect } kind;
  int port = 0;
  double t = 0;
  model::Sample s;
  bool on = false;
  double nominal_v = NAN;  // kOutput: supply × level
  std::string text;
  std::int64_t dev_us = -1;  // kSample from a rig's ADC: its device time (µs, unwrapped)
};

/// What the reader threads and the main thread share.
struct Shared {
  std::mutex mu;
  std::vector<Item> items;
  std::vector<PortStats> stats;
  void Push(std::vector<Item>* batch) {
    if (batch->empty()) return;
    std::lock_guard<std::mutex> l(mu);
    items.insert(items.end(), std::make_move_iterator(batch->begin()), std::make_move_iterator(batch->end()));
    batch->clear();
  }
};

class PortReader {
 public:
  PortReader(const DaemonPortConfig& cfg, int index, Shared* shared, const std::atomic<bool>* quit,
             Clock::time_point epoch, double reconnect_max)
      : cfg_(cfg), index_(index), shared_(shared), quit_(quit), epoch_(epoch), reconnect_max_(reconnect_max) {}

  void Run() {
    double backoff = 0.25;
    bool first = true;
    while (!*quit_) {
      PortOptions po;
      po.baud = cfg_.baud;
      Result<std::unique_ptr<ByteSource>> port = OpenPort(cfg_.path, po);
      Status s = port.ok() ? (cfg_.protocol == "rig" ? RunRig(**port) : RunText(**port)) : port.status();
      if (*quit_) break;
      {
        std::lock_guard<std::mutex> l(shared_->mu);
        PortStats& st = shared_->stats[static_cast<std::size_t>(index_)];
        st.connected = false;
        st.last_error = s.message();
        if (!first) ++st.reconnects;
      }
      first = false;
      if (connected_once_) backoff = 0.25;  // it worked before: try again soon
      connected_once_ = false;
      for (double waited = 0; waited < backoff && !*quit_; waited += 0.05) {
        std::this_thread::sleep_for(std::chrono::milliseconds(50));
      }
      backoff = std::min(backoff * 2, reconnect_max_);
    }
  }

 private:
  double Now() const { return std::chrono::duration<double>(Clock::now() - epoch_).count(); }

  void Connected(const std::string& instrument, std::vector<Item>* batch) {
    connected_once_ = true;
    batch->push_back({Item::kConnect, index_, Now(), {}, false, NAN, instrument});
    shared_->Push(batch);
    std::lock_guard<std::mutex> l(shared_->mu);
    PortStats& st = shared_->stats[static_cast<std::size_t>(index_)];
    st.connected = true;
    st.instrument = instrument;
    st.last_error.clear();
  }

  Status Lost(const Status& why, double last_t, std::vector<Item>* batch) {
    batch->push_back({Item::kDisconnect, index_, last_t, {}, false, NAN, why.message()});
    shared_->Push(batch);
    return why;
  }

  Status RunRig(ByteSource& port) {
    RigLink link(&port);
    Result<RigInfo> info = link.Identify();
    if (!info.ok()) return info.status();
    RB_RETURN_IF_ERROR(link.Stream(true));
    std::vector<Item> batch;
    Connected(info->instrument, &batch);
    const double fs = std::max<double>(1, info->ident.output_full_scale);
    std::optional<TachTracker> tach;
    // host = device + offset(device); offset is linear between updates with a slope of at
    // most 200 ppm, so sample spacing changes by at most 0.1 µs at 2 kHz.
    bool have_offset = false;
    double offset0 = 0, dev0 = 0, slope = 0, last_t = Now();
    std::deque<std::pair<double, double>> obs;  // (device s, host − device)
    auto last_data = Clock::now();
    std::deque<std::pair<Clock::time_point, std::size_t>> rate;
    while (!*quit_) {
      Status s = link.Poll(100);
      if (!s.ok()) return Lost(s, last_t, &batch);
      RigData d = link.TakeData();
      const auto now_c = Clock::now();
      if (d.adc.empty() && d.marks_us.empty()) {
        if (now_c - last_data > std::chrono::seconds(5)) {
          return Lost(Status::IOError(cfg_.path + ": no samples for 5 s; reopening"), last_t, &batch);
        }
      }
      // Map the rig clock onto ours: host = device + offset(device), offset piecewise linear
      // from batch end to batch end. The smallest (arrival − device time) seen lately is the
      // best estimate of the true offset; the line aims at it with a slope of at most 200 ppm,
      // so sample spacing changes by at most 0.1 µs at 2 kHz and time never runs backwards.
      double dev_end = NAN, target = NAN;
      if (!d.adc.empty() || !d.marks_us.empty()) {
        last_data = now_c;
        std::int64_t latest = INT64_MIN;
        if (!d.adc.empty()) latest = std::max(latest, d.adc.back().t_us);
        if (!d.marks_us.empty()) latest = std::max(latest, d.marks_us.back());
        dev_end = static_cast<double>(latest) * 1e-6;
        const double o = Now() - dev_end;
        obs.push_back({dev_end, o});
        while (!obs.empty() && obs.front().first < dev_end - 2.0) obs.pop_front();
        target = o;
        for (const auto& p : obs) target = std::min(target, p.second);
        if (!have_offset) {
          have_offset = true;
          offset0 = o;
          dev0 = dev_end;
        }
      }
      auto host = [&](std::int64_t us) {
        const double dv = static_cast<double>(us) * 1e-6;
        return dv + offset0 + slope * (dv - dev0);
      };
      for (const RigEvent& e : d.events) {
        if (e.msg.code == proto::kEvOutputOn || e.msg.code == proto::kEvOutputOff) {
          const bool on = e.msg.code == proto::kEvOutputOn;
          batch.push_back({Item::kOutput, index_, have_offset ? host(e.t_us) : Now(), {}, on,
                           info->supply_volts * e.msg.level / fs, ""});
        }
      }
      std::vector<model::Sample> tach_out;
      std::size_t ia = 0, im = 0, n_adc = 0;
      while (ia < d.adc.size() || im < d.marks_us.size()) {
        if (im < d.marks_us.size() && (ia == d.adc.size() || d.marks_us[im] < d.adc[ia].t_us)) {
          const double t = host(d.marks_us[im++]);
          if (!tach) tach.emplace(TachOptions{info->ident.marks_per_rev, 0.25, 0.05}, t);
          tach->Mark(t, &tach_out);
          continue;
        }
        const AdcReading& a = d.adc[ia++];
        const double t = host(a.t_us);
        if (!tach) tach.emplace(TachOptions{info->ident.marks_per_rev, 0.25, 0.05}, t);
        tach->Advance(t, &tach_out);
        for (const model::Sample& z : tach_out) batch.push_back({Item::kSample, index_, z.t, z, false, NAN, ""});
        tach_out.clear();
        model::Sample smp{.t = t, .current = a.current, .voltage = a.voltage};
        batch.push_back({Item::kSample, index_, t, smp, false, NAN, "", a.t_us});
        last_t = t;
        ++n_adc;
      }
      for (const model::Sample& z : tach_out) batch.push_back({Item::kSample, index_, z.t, z, false, NAN, ""});
      if (!std::isnan(dev_end)) {
        offset0 += slope * (dev_end - dev0);
        dev0 = dev_end;
        slope = std::clamp(target - offset0, -2e-4, 2e-4);
      }
      rate.push_back({now_c, n_adc});
      while (!rate.empty() && now_c - rate.front().first > std::chrono::seconds(1)) rate.pop_front();
      shared_->Push(&batch);
      const DecoderCounters c = link.counters();
      std::lock_guard<std::mutex> l(shared_->mu);
      PortStats& st = shared_->stats[static_cast<std::size_t>(index_)];
      st.bytes = c.bytes;
      st.frames = c.frames;
      st.frames_lost = c.frames_lost;
      st.bad_frames = c.rejected();
      st.garbage_bytes = c.garbage_bytes;
      st.samples += n_adc;
      std::size_t n = 0;
      for (const auto& r : rate) n += r.second;
      st.samples_per_s = static_cast<double>(n);
    }
    link.Send(StreamCmd{false}).status().ok();
    return Status::Ok();
  }

  Status RunText(ByteSource& port) {
    std::vector<Item> batch;
    Connected(cfg_.instrument.name, &batch);
    LineSplitter split;
    std::vector<std::string> lines;
    std::uint8_t buf[4096];
    double last_t = Now();
    while (!*quit_) {
      Result<std::size_t> n = port.Read(buf, 100);
      if (!n.ok()) return Lost(n.status(), last_t, &batch);
      if (*n == 0) continue;
      const double t = Now();
      lines.clear();
      split.Feed({reinterpret_cast<const char*>(buf), *n}, &lines);
      std::uint64_t good = 0, bad = 0;
      std::string err;
      for (const std::string& line : lines) {
        Result<std::optional<model::Sample>> s = ParseTextLine(cfg_.instrument, line, t);
        if (!s.ok()) {
          ++bad;
          err = s.status().message();
        } else if (*s) {
          batch.push_back({Item::kSample, index_, (*s)->t, **s, false, NAN, ""});
          last_t = (*s)->t;
          ++good;
        }
      }
      shared_->Push(&batch);
      std::lock_guard<std::mutex> l(shared_->mu);
      PortStats& st = shared_->stats[static_cast<std::size_t>(index_)];
      st.bytes += *n;
      st.lines += lines.size();
      st.samples += good;
      st.bad_lines += bad;
      if (!err.empty()) st.last_error = err;
    }
    return Status::Ok();
  }

  DaemonPortConfig cfg_;
  int index_;
  Shared* shared_;
  const std::atomic<bool>* quit_;
  Clock::time_point epoch_;
  double reconnect_max_;
  bool connected_once_ = false;
};

// ---- control socket

Result<int> Listen(const std::string& path) {
  std::error_code ec;
  const std::filesystem::path dir = std::filesystem::path(path).parent_path();
  if (!dir.empty() && !std::filesystem::exists(dir)) {
    std::filesystem::create_directories(dir, ec);
    ::chmod(dir.c_str(), 0700);
  }
  sockaddr_un addr{};
  addr.sun_family = AF_UNIX;
  if (path.size() >= sizeof addr.sun_path) return Status::InvalidArgument(path + ": socket path too long");
  std::memcpy(addr.sun_path, path.c_str(), path.size() + 1);
  // A daemon already answering there? Then do not take its socket away.
  if (int probe = ::socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0); probe >= 0) {
    const bool alive = ::connect(probe, reinterpret_cast<sockaddr*>(&addr), sizeof addr) == 0;
    ::close(probe);
    if (alive) return Status::FailedPrecondition(path + ": another daemon is listening there");
  }
  ::unlink(path.c_str());
  const int fd = ::socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC | SOCK_NONBLOCK, 0);
  if (fd < 0) return Status::IOError(std::string("socket: ") + std::strerror(errno));
  const mode_t old = ::umask(0177);  // user-only from the start
  const int rc = ::bind(fd, reinterpret_cast<sockaddr*>(&addr), sizeof addr);
  ::umask(old);
  if (rc != 0 || ::listen(fd, 8) != 0) {
    Status s = Status::IOError(path + ": cannot listen: " + std::strerror(errno));
    ::close(fd);
    return s;
  }
  ::chmod(path.c_str(), 0600);
  return fd;
}

class Daemon {
 public:
  Daemon(const DaemonConfig& c, storage::Database& db, const std::function<void(const std::string&)>& say)
      : c_(c), db_(db), say_(say), writer_(&db), cutter_(c.cutter, MakeSink()) {
    shared_.stats.resize(c.ports.size());
  }

  Status Run(const volatile std::sig_atomic_t* stop);

 private:
  RunSink MakeSink();
  double Now() const { return std::chrono::duration<double>(Clock::now() - epoch_).count(); }
  Result<std::int64_t> MotorId();
  std::optional<std::int64_t> DeviceUsAt(std::size_t port, double t) const;
  void Process(bool all);
  /// Control socket: a client is accepted (peer credentials checked) and served without
  /// blocking the loop, so requests never delay a commit.
  void Accept(int lfd);
  void ServeClients();
  struct Client {
    int fd;
    std::string req;
    Clock::time_point deadline;
  };
  std::vector<Client> clients_;
  std::string Answer(const std::string& request);
  void Say(const std::string& s) {
    if (say_) say_(s);
  }

  const DaemonConfig& c_;
  storage::Database& db_;
  std::function<void(const std::string&)> say_;
  RunWriter writer_;
  RunCutter cutter_;
  Shared shared_;
  Clock::time_point epoch_ = Clock::now();
  std::vector<Item> pending_;
  std::string motor_;
  double nominal_v_ = NAN;
  std::vector<double> gap_since_;  // per port: time its data stopped (NaN = none)
  // Per rig port: (stream time, device µs) of its recent ADC samples, so a run's metadata
  // can say which device time its time 0 is (traceability to the rig's own clock).
  std::vector<std::deque<std::pair<double, std::int64_t>>> dev_times_;
  std::vector<std::string> instruments_;
  Status db_error_;
  std::string run_kind_;
  std::uint64_t runs_ = 0;
};

Result<std::int64_t> Daemon::MotorId() {
  const std::string label = motor_.empty() ? "unassigned" : motor_;
  Result<storage::Motor> m = db_.FindMotor(label);
  if (m.ok()) return m->id;
  if (!motor_.empty()) return m.status();
  return db_.AddMotor(label, "", "runs the daemon logged while no motor was mounted");
}

/// The device time of rig port `port` at stream time t, from its ADC sample nearest to t
/// (exact to the µs near t: the clock mapping slews by at most 200 ppm).
std::optional<std::int64_t> Daemon::DeviceUsAt(std::size_t port, double t) const {
  if (port >= dev_times_.size() || dev_times_[port].empty()) return std::nullopt;
  const auto& d = dev_times_[port];
  auto it = std::lower_bound(d.begin(), d.end(), t, [](const auto& p, double x) { return p.first < x; });
  if (it == d.end() || (it != d.begin() && t - std::prev(it)->first < it->first - t)) --it;
  return it->second - std::llround((it->first - t) * 1e6);
}

RunSink Daemon::MakeSink() {
  RunSink s;
  s.begin = [this](model::RunKind kind, double t0, const std::string& why) {
    Result<std::int64_t> motor = MotorId();
    if (!motor.ok()) {
      db_error_ = motor.status();
      return;
    }
    storage::NewRun nr;
    nr.motor_id = *motor;
    nr.kind = kind;
    nr.started_utc = UtcNowIso();
    std::string src;
    json ports = json::array();
    for (std::size_t k = 0; k < c_.ports.size(); ++k) {
      src += (src.empty() ? "daemon:" : ",") + c_.ports[k].path;
      json port = {{"name", c_.ports[k].name}, {"path", c_.ports[k].path}, {"protocol", c_.ports[k].protocol}};
      if (std::optional<std::int64_t> d = DeviceUsAt(k, t0)) port["device_t0_us"] = *d;
      ports.push_back(port);
    }
    nr.source = src;
    if (!std::isnan(nominal_v_) && kind != model::RunKind::kCoastDown) nr.nominal_voltage = nominal_v_;
    if (kind == model::RunKind::kCoastDown && !std::isnan(nominal_v_)) nr.nominal_voltage = nominal_v_;
    json meta = {{"logger", "daemon"},
                 {"trigger", why},
                 {"ports", ports},
                 {"instruments", instruments_},
                 {"time_base", "daemon clock; rig clocks mapped with a slewed offset (<= 200 ppm); "
                               "ports[].device_t0_us: the rig's clock at run time 0"},
                 {"preroll_s", kind == model::RunKind::kSteady ? 0.0 : c_.cutter.preroll_s},
                 {"samples", "raw: instrument scales; calibration is applied when read"}};
    nr.meta_json = meta.dump();
    Status st = writer_.Begin(nr, t0, instruments_);
    if (!st.ok()) {
      db_error_ = st;
      return;
    }
    run_kind_ = std::string(model::RunKindName(kind));
    ++runs_;
    Say("run " + std::to_string(writer_.run_id()) + ": " + run_kind_ + " (" + why + ")");
  };
  s.add = [this](const model::Sample& smp) {
    if (writer_.open()) writer_.Add(smp);
  };
  s.end = [this](const std::string& reason, double t) {
    if (!writer_.open()) return;
    const bool stopped = reason.rfind("daemon stopped", 0) == 0;
    const std::int64_t id = writer_.run_id();
    Status st = writer_.Finish(stopped ? storage::RunStatus::kInterrupted : storage::RunStatus::kComplete, reason, t);
    if (!st.ok()) {
      if (db_error_.ok()) db_error_ = st;
      Say("run " + std::to_string(id) + " left open (" + reason + "): " + st.message() +
          "; it is marked interrupted at the next start");
    } else {
      Say("run " + std::to_string(id) + " closed: " + reason);
    }
    run_kind_.clear();
  };
  return s;
}

void Daemon::Process(bool all) {
  {
    std::lock_guard<std::mutex> l(shared_.mu);
    pending_.insert(pending_.end(), std::make_move_iterator(shared_.items.begin()),
                    std::make_move_iterator(shared_.items.end()));
    shared_.items.clear();
  }
  // Connects and disconnects first (they carry no data), then data up to the watermark
  // in time order across ports.
  std::stable_sort(pending_.begin(), pending_.end(), [](const Item& a, const Item& b) { return a.t < b.t; });
  const double watermark = all ? INFINITY : Now() - c_.merge_delay_s;
  std::size_t k = 0;
  for (; k < pending_.size() && pending_[k].t <= watermark; ++k) {
    Item& it = pending_[k];
    switch (it.kind) {
      case Item::kSample:
        if (it.dev_us >= 0) {
          auto& d = dev_times_[static_cast<std::size_t>(it.port)];
          d.emplace_back(it.t, it.dev_us);
          const double keep = std::max(c_.cutter.preroll_s, c_.cutter.coast_preroll_s) + 1.0;
          while (!d.empty() && d.front().first < it.t - keep) d.pop_front();
        }
        cutter_.Feed(it.s);
        break;
      case Item::kOutput:
        if (it.on) nominal_v_ = it.nominal_v;
        cutter_.Output(it.on, it.t);
        break;
      case Item::kConnect: {
        const auto p = static_cast<std::size_t>(it.port);
        if (std::find(instruments_.begin(), instruments_.end(), it.text) == instruments_.end()) {
          instruments_.push_back(it.text);
        }
        Say("port " + c_.ports[p].path + ": connected (" + it.text + ")");
        if (!std::isnan(gap_since_[p])) {
          const double lost = Now() - gap_since_[p];
          if (writer_.open()) {
            writer_.AddEvent(gap_since_[p], "gap",
                             "port " + c_.ports[p].path + ": no data for " + std::to_string(lost) +
                                 " s (device vanished; reconnected)");
          }
          std::lock_guard<std::mutex> l(shared_.mu);
          ++shared_.stats[p].gaps;
          gap_since_[p] = NAN;
        }
        break;
      }
      case Item::kDisconnect: {
        const auto p = static_cast<std::size_t>(it.port);
        gap_since_[p] = it.t;
        Say("port " + c_.ports[p].path + ": lost (" + it.text + "); reconnecting");
        break;
      }
    }
  }
  pending_.erase(pending_.begin(), pending_.begin() + static_cast<std::ptrdiff_t>(k));
}

std::string Daemon::Answer(const std::string& req) {
  if (req == "status") {
    json ports = json::array();
    std::lock_guard<std::mutex> l(shared_.mu);
    for (std::size_t k = 0; k < c_.ports.size(); ++k) {
      const PortStats& s = shared_.stats[k];
      ports.push_back({{"name", c_.ports[k].name},
                       {"path", c_.ports[k].path},
                       {"protocol", c_.ports[k].protocol},
                       {"connected", s.connected},
                       {"instrument", s.instrument},
                       {"samples", s.samples},
                       {"samples_per_s", s.samples_per_s},
                       {"bytes", s.bytes},
                       {"frames", s.frames},
                       {"frames_lost", s.frames_lost},
                       {"bad_frames", s.bad_frames},
                       {"garbage_bytes", s.garbage_bytes},
                       {"lines", s.lines},
                       {"bad_lines", s.bad_lines},
                       {"reconnects", s.reconnects},
                       {"gaps", s.gaps},
                       {"last_error", s.last_error}});
    }
    json run = nullptr;
    if (writer_.open()) {
      run = {{"id", writer_.run_id()}, {"kind", run_kind_}, {"samples", writer_.samples()},
             {"committed", writer_.committed()}, {"duration_s", writer_.last_t()}};
    }
    return json{{"ok", true},
                {"motor", motor_.empty() ? json(nullptr) : json(motor_)},
                {"database", db_.path()},
                {"uptime_s", Now()},
                {"runs_started", runs_},
                {"run", run},
                {"ports", ports}}
        .dump();
  }
  if (req.rfind("mount ", 0) == 0 || req == "unmount") {
    const std::string label = req == "unmount" ? "" : req.substr(6);
    if (!label.empty()) {
      Result<storage::Motor> m = db_.FindMotor(label);
      if (!m.ok()) return json{{"ok", false}, {"error", m.status().message()}}.dump();
    }
    if (writer_.open()) cutter_.Close("motor changed");
    motor_ = label;
    Say(label.empty() ? "no motor mounted" : "motor " + label + " mounted");
    return json{{"ok", true}, {"motor", label.empty() ? json(nullptr) : json(label)}}.dump();
  }
  return json{{"ok", false}, {"error", "unknown request '" + req + "'; expected status, mount LABEL or unmount"}}.dump();
}

void Daemon::Accept(int lfd) {
  const int fd = ::accept4(lfd, nullptr, nullptr, SOCK_CLOEXEC | SOCK_NONBLOCK);
  if (fd < 0) return;
  ucred cred{};
  socklen_t len = sizeof cred;
  if (::getsockopt(fd, SOL_SOCKET, SO_PEERCRED, &cred, &len) != 0 || (cred.uid != ::getuid() && cred.uid != 0)) {
    const std::string no = json{{"ok", false}, {"error", "permission denied: not the daemon's user"}}.dump() + "\n";
    ::send(fd, no.data(), no.size(), MSG_NOSIGNAL);
    ::close(fd);
    return;
  }
  if (clients_.size() >= 16) {  // a bounded number of requests in flight
    ::close(fd);
    return;
  }
  clients_.push_back({fd, "", Clock::now() + std::chrono::milliseconds(300)});
}

void Daemon::ServeClients() {
  for (std::size_t k = 0; k < clients_.size();) {
    Client& c = clients_[k];
    bool done = Clock::now() >= c.deadline;
    char buf[512];
    for (;;) {
      const ssize_t n = ::recv(c.fd, buf, sizeof buf, 0);
      if (n > 0) {
        c.req.append(buf, static_cast<std::size_t>(n));
        continue;
      }
      if (n == 0 || (errno != EAGAIN && errno != EWOULDBLOCK && errno != EINTR)) done = true;
      break;
    }
    done = done || c.req.find('\n') != std::string::npos || c.req.size() >= 1024;
    if (!done) {
      ++k;
      continue;
    }
    std::string req = c.req.substr(0, c.req.find('\n'));
    while (!req.empty() && req.back() == '\r') req.pop_back();
    const std::string out = Answer(req) + "\n";
    ::send(c.fd, out.data(), out.size(), MSG_NOSIGNAL);
    ::close(c.fd);
    clients_.erase(clients_.begin() + static_cast<std::ptrdiff_t>(k));
  }
}

Status Daemon::Run(const volatile std::sig_atomic_t* stop) {
  Result<int> marked = db_.MarkStaleRunsInterrupted(UtcNowIso());
  if (!marked.ok()) return marked.status();
  if (*marked > 0) Say(std::to_string(*marked) + " run(s) left 'recording' by an earlier logger marked interrupted");
  if (!c_.motor.empty()) {
    Result<storage::Motor> m = db_.FindMotor(c_.motor);
    if (!m.ok()) return m.status().WithPrefix("config motor");
    motor_ = c_.motor;
  }
  const std::string sock = c_.socket.empty() ? DefaultSocketPath() : c_.socket;
  Result<int> lfd = Listen(sock);
  if (!lfd.ok()) return lfd.status();
  Say("listening on " + sock + "; database " + db_.path());
  gap_since_.assign(c_.ports.size(), NAN);
  dev_times_.resize(c_.ports.size());

  std::atomic<bool> quit{false};
  std::vector<std::unique_ptr<PortReader>> readers;
  std::vector<std::thread> threads;
  for (std::size_t k = 0; k < c_.ports.size(); ++k) {
    readers.push_back(std::make_unique<PortReader>(c_.ports[k], static_cast<int>(k), &shared_, &quit, epoch_,
                                                   c_.reconnect_max_s));
    threads.emplace_back([r = readers.back().get()] { r->Run(); });
  }
  // Commits on a fixed schedule: a sample waits at most the reorder window plus one commit
  // interval (≤ 0.25 s, checked when the config is loaded) before its commit starts.
  const auto interval =
      std::chrono::duration_cast<Clock::duration>(std::chrono::duration<double>(c_.commit_interval_s));
  auto next_commit = Clock::now() + interval;
  Status result;
  std::vector<pollfd> fds;
  while (!*stop) {
    auto wake = std::min(next_commit, Clock::now() + std::chrono::milliseconds(50));
    fds.assign(1, pollfd{*lfd, POLLIN, 0});
    for (const Client& c : clients_) {
      fds.push_back({c.fd, POLLIN, 0});
      wake = std::min(wake, c.deadline);
    }
    const auto wait = std::chrono::ceil<std::chrono::milliseconds>(wake - Clock::now()).count();
    if (::poll(fds.data(), fds.size(), static_cast<int>(std::clamp<std::int64_t>(wait, 0, 50))) > 0 &&
        (fds[0].revents & POLLIN)) {
      Accept(*lfd);
    }
    ServeClients();
    Process(false);
    if (const auto now = Clock::now(); now >= next_commit) {
      Status s = writer_.Flush();
      if (s.code() == Code::kBusy) {
        Say("commit delayed (will retry): " + s.message());  // another writer held the lock
      } else if (!s.ok()) {
        // A full disk or a failing one: stop cleanly. Every commit acknowledged so far is
        // on disk; the open run is marked interrupted at the next start.
        db_error_ = s.WithPrefix("commit failed; logging stopped");
      }
      next_commit = std::max(next_commit + interval, now);
    }
    if (!db_error_.ok()) {
      result = db_error_;
      break;
    }
  }
  for (const Client& c : clients_) ::close(c.fd);
  clients_.clear();
  quit = true;
  for (std::thread& t : threads) t.join();
  Process(true);  // everything the ports delivered
  cutter_.Close(result.ok() ? "daemon stopped (signal)" : "daemon stopped (error)");
  Status s = writer_.Flush();
  ::close(*lfd);
  ::unlink(sock.c_str());
  if (!result.ok()) return result;
  return s;
}

}  // namespace

namespace {
std::string FormatSeconds(double s) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", s);
  return buf;
}
}  // namespace

std::string DefaultSocketPath() {
  if (const char* x = std::getenv("XDG_RUNTIME_DIR"); x && *x) return std::string(x) + "/rotorbench/daemon.sock";
  return "/tmp/rotorbench-" + std::to_string(::getuid()) + "/daemon.sock";
}

Result<DaemonConfig> LoadDaemonConfig(const std::string& path) {
  Result<TomlDoc> doc = TomlDoc::Parse(path);
  if (!doc.ok()) return doc.status();
  const toml::table& root = doc->root();
  RB_RETURN_IF_ERROR(CheckKeys(*doc, root,
                               {"database", "socket", "motor", "commit_interval_s", "reconnect_max_s", "max_database_mb",
                                "port", "cutter"},
                               ""));
  DaemonConfig c;
  const std::filesystem::path base = std::filesystem::absolute(path).parent_path();
  auto rel = [&](const std::string& p) { return p.empty() || p[0] == '/' ? p : (base / p).string(); };
  for (auto [key, field] : {std::pair{"database", &c.database}, std::pair{"socket", &c.socket}, std::pair{"motor", &c.motor}}) {
    Result<std::optional<std::string>> v = GetString(*doc, root, key);
    if (!v.ok()) return v.status();
    if (*v) *field = **v;
  }
  c.database = rel(c.database);
  c.socket = rel(c.socket);
  if (auto v = GetNumber(*doc, root, "commit_interval_s"); !v.ok()) {
    return v.status();
  } else if (*v) {
    const double most = kMaxSampleWaitS - c.merge_delay_s;
    if (!(**v > 0 && **v <= most + 1e-12)) {
      return Status::InvalidArgument(Where(*doc, root, "commit_interval_s") + ": expected 0 < value <= " +
                                     FormatSeconds(most) + " s (with the " + FormatSeconds(c.merge_delay_s) +
                                     " s reorder window, a sample waits at most 0.25 s for its commit)");
    }
    c.commit_interval_s = **v;
  }
  if (auto v = GetNumber(*doc, root, "max_database_mb"); !v.ok()) {
    return v.status();
  } else if (*v) {
    if (!(**v > 0)) return Status::InvalidArgument(Where(*doc, root, "max_database_mb") + ": expected a size > 0 MB");
    c.max_database_mb = **v;
  }
  if (auto v = GetNumber(*doc, root, "reconnect_max_s"); !v.ok()) return v.status(); else if (*v) c.reconnect_max_s = **v;
  const toml::array* ports = root["port"].as_array();
  if (!ports || ports->empty()) {
    return Status::InvalidArgument(path + ": no [[port]] tables; expected at least one port");
  }
  for (const toml::node& n : *ports) {
    const toml::table* t = n.as_table();
    if (!t) return Status::InvalidArgument(path + ": [[port]] entries must be tables");
    RB_RETURN_IF_ERROR(CheckKeys(*doc, *t, {"name", "path", "protocol", "instrument", "baud"}, "port"));
    DaemonPortConfig p;
    for (auto [key, field] : {std::pair{"name", &p.name}, std::pair{"path", &p.path}, std::pair{"protocol", &p.protocol}}) {
      Result<std::optional<std::string>> v = GetString(*doc, *t, key);
      if (!v.ok()) return v.status();
      if (*v) *field = **v;
    }
    const std::string where = Where(*doc, *t, "path");
    if (p.path.empty()) return Status::InvalidArgument(where + ": a [[port]] needs path");
    if (p.protocol != "rig" && p.protocol != "text") {
      return Status::InvalidArgument(where + ": protocol '" + Printable(p.protocol) + "'; expected rig or text");
    }
    if (auto v = GetNumber(*doc, *t, "baud"); !v.ok()) return v.status(); else if (*v) p.baud = static_cast<int>(**v);
    Result<std::optional<std::string>> ins = GetString(*doc, *t, "instrument");
    if (!ins.ok()) return ins.status();
    if (p.protocol == "text") {
      if (!*ins) return Status::InvalidArgument(where + ": a text port needs instrument = \"MAP.toml\"");
      Result<TextInstrumentMap> m = LoadTextInstrumentMap(rel(**ins));
      if (!m.ok()) return m.status();
      p.instrument = *m;
    }
    if (p.name.empty()) p.name = p.path;
    c.ports.push_back(p);
  }
  Result<const toml::table*> cut = GetTable(*doc, root, "cutter");
  if (!cut.ok()) return cut.status();
  if (*cut) {
    std::vector<std::pair<std::string, double*>> keys = {
        {"preroll_s", &c.cutter.preroll_s}, {"current_on_A", &c.cutter.current_on_A},
        {"current_off_A", &c.cutter.current_off_A}, {"speed_on_rad_s", &c.cutter.speed_on_rad_s},
        {"decide_s", &c.cutter.decide_s}, {"steady_tolerance", &c.cutter.steady_tolerance},
        {"steady_max_s", &c.cutter.steady_max_s}};
    std::set<std::string> allowed;
    for (const auto& k : keys) allowed.insert(k.first);
    RB_RETURN_IF_ERROR(CheckKeys(*doc, **cut, allowed, "cutter"));
    for (const auto& [k, field] : keys) {
      Result<std::optional<double>> v = GetNumber(*doc, **cut, k);
      if (!v.ok()) return v.status();
      if (*v) *field = **v;
    }
  }
  return c;
}

Status RunDaemon(const DaemonConfig& config, const std::string& db_path, const volatile std::sig_atomic_t* stop,
                 const std::function<void(const std::string&)>& say) {
  storage::OpenOptions oo;
  oo.synchronous_full = true;  // a logger: each commit survives a power cut (docs/design.md)
  oo.max_size_bytes = static_cast<std::int64_t>(config.max_database_mb * 1024 * 1024);
  Result<storage::Database> db = storage::Database::Open(config.database.empty() ? db_path : config.database, oo);
  if (!db.ok()) return db.status();
  Daemon d(config, *db, say);
  return d.Run(stop);
}

Result<std::string> DaemonRequest(const std::string& socket_path, const std::string& request) {
  // The protocol is one line per request: a label with a line break would otherwise carry
  // a second request with it.
  if (request.find_first_of(std::string("\r\n\0", 3)) != std::string::npos) {
    std::string shown;
    for (const char c : request) shown += c == '\n' ? "\\n" : c == '\r' ? "\\r" : c == '\0' ? "\\0" : std::string(1, c);
    return Status::InvalidArgument("'" + shown + "': a line break or NUL in a request to the daemon; "
                                   "expected one line (labels sent to the daemon cannot hold line breaks)");
  }
  sockaddr_un addr{};
  addr.sun_family = AF_UNIX;
  if (socket_path.size() >= sizeof addr.sun_path) return Status::InvalidArgument(socket_path + ": path too long");
  std::memcpy(addr.sun_path, socket_path.c_str(), socket_path.size() + 1);
  const int fd = ::socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
  if (fd < 0) return Status::IOError(std::string("socket: ") + std::strerror(errno));
  if (::connect(fd, reinterpret_cast<sockaddr*>(&addr), sizeof addr) != 0) {
    Status s = Status::NotFound(socket_path + ": no daemon listening (" + std::strerror(errno) +
                                "); start one with `rotorbench daemon --config FILE`");
    ::close(fd);
    return s;
  }
  const std::string line = request + "\n";
  ::send(fd, line.data(), line.size(), MSG_NOSIGNAL);
  std::string out;
  char buf[4096];
  const auto until = Clock::now() + std::chrono::seconds(3);
  while (out.find('\n') == std::string::npos && Clock::now() < until) {
    pollfd p{fd, POLLIN, 0};
    if (::poll(&p, 1, 100) <= 0) continue;
    const ssize_t n = ::recv(fd, buf, sizeof buf, 0);
    if (n <= 0) break;
    out.append(buf, static_cast<std::size_t>(n));
  }
  ::close(fd);
  if (out.empty()) return Status::IOError(socket_path + ": the daemon did not answer");
  while (!out.empty() && out.back() == '\n') out.pop_back();
  return out;
}

}  // namespace rb::acquire
