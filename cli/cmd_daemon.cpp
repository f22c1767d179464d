// rotorbench daemon | bench mount/unmount | status — the long-running logger.
#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include <memory>
#include <nlohmann/json.hpp>

#include "acquire/daemon.h"
#include "cli/context.h"
#include "cli/output.h"
#include "cli/signals.h"

namespace rb::cli {

void AddDaemonCommands(CLI::App& app, Context& ctx) {
  auto config = std::make_shared<std::string>();
  auto socket = std::make_shared<std::string>();
  CLI::App* d = app.add_subcommand(
      "daemon", "Log continuously from the configured ports, cutting runs from rig events or the data");
  d->add_option("--config", *config, "TOML file: ports, motor, socket (see README, acquisition)")->required();
  d->add_option("--socket", *socket, "Control socket (default: from the config, else $XDG_RUNTIME_DIR/rotorbench/daemon.sock)");
  d->callback([&ctx, config, socket] {
    ctx.action = [&ctx, config, socket]() -> Status {
      Result<acquire::DaemonConfig> c = acquire::LoadDaemonConfig(*config);
      if (!c.ok()) return c.status();
      if (!socket->empty()) c->socket = *socket;
      const volatile std::sig_atomic_t* stop = InstallStopHandlers();
      return acquire::RunDaemon(*c, ctx.db_path, stop, [](const std::string& line) {
        std::fprintf(stderr, "rotorbench daemon: %s\n", line.c_str());
      });
    };
  });

  auto sock_opt = [](CLI::App* a, std::shared_ptr<std::string> s) {
    a->add_option("--socket", *s, "Control socket of the daemon (default: $XDG_RUNTIME_DIR/rotorbench/daemon.sock)");
  };
  auto request = [](const std::string& sock, const std::string& req) -> Result<nlohmann::json> {
    Result<std::string> r = acquire::DaemonRequest(sock.empty() ? acquire::DefaultSocketPath() : sock, req);
    if (!r.ok()) return r.status();
    nlohmann::json j = nlohmann::json::parse(*r, nullptr, false);
    if (j.is_discarded()) return Status::Corruption("daemon answered '" + *r + "'; expected JSON");
    if (!j.value("ok", false)) return Status::FailedPrecondition(j.value("error", std::string("daemon refused")));
    return j;
  };

  CLI::App* bench = app.add_subcommand("bench", "Tell the running daemon which motor is on the bench");
  bench->require_subcommand(1);
  auto label = std::make_shared<std::string>();
  auto bsock = std::make_shared<std::string>();
  CLI::App* mount = bench->add_subcommand("mount", "Runs logged from now on belong to this motor");
  mount->add_option("LABEL", *label, "Motor label (must exist)")->required();
  sock_opt(mount, bsock);
  mount->callback([&ctx, label, bsock, request] {
    ctx.action = [label, bsock, request]() -> Status {
      Result<nlohmann::json> j = request(*bsock, "mount " + *label);
      if (!j.ok()) return j.status();
      fmt::print("motor {} mounted\n", *label);
      return Status::Ok();
    };
  });
  CLI::App* unmount = bench->add_subcommand("unmount", "No motor on the bench");
  sock_opt(unmount, bsock);
  unmount->callback([&ctx, bsock, request] {
    ctx.action = [bsock, request]() -> Status {
      Result<nlohmann::json> j = request(*bsock, "unmount");
      if (!j.ok()) return j.status();
      fmt::print("no motor mounted\n");
      return Status::Ok();
    };
  });

  auto ssock = std::make_shared<std::string>();
  auto as_json = std::make_shared<bool>(false);
  CLI::App* st = app.add_subcommand("status", "Show the running daemon: ports, current run, rates, errors");
  sock_opt(st, ssock);
  st->add_flag("--json", *as_json, "Print the daemon's answer as JSON");
  st->callback([&ctx, ssock, as_json, request] {
    ctx.action = [ssock, as_json, request]() -> Status {
      Result<nlohmann::json> j = request(*ssock, "status");
      if (!j.ok()) return j.status();
      if (*as_json) {
        PrintJson(*j);
        return Status::Ok();
      }
      const nlohmann::json& s = *j;
      fmt::print("daemon up {:.0f} s, database {}, motor {}\n", s["uptime_s"].get<double>(),
                 s["database"].get<std::string>(), s["motor"].is_null() ? "(none)" : s["motor"].get<std::string>());
      if (s["run"].is_null()) {
        fmt::print("no run open ({} started)\n", s["runs_started"].get<std::uint64_t>());
      } else {
        fmt::print("run {} open: {}, {} samples, {:.2f} s\n", s["run"]["id"].get<std::int64_t>(),
                   s["run"]["kind"].get<std::string>(), s["run"]["samples"].get<std::uint64_t>(),
                   s["run"]["duration_s"].get<double>());
      }
      Table t({"port", "protocol", "state", "samples/s", "samples", "lost", "bad", "garbage", "bad lines",
               "reconnects", "gaps", "last error"});
      for (const auto& p : s["ports"]) {
        t.Row({p["path"], p["protocol"], p["connected"].get<bool>() ? "connected" : "reconnecting",
               Num(p["samples_per_s"].get<double>(), 5), std::to_string(p["samples"].get<std::uint64_t>()),
               std::to_string(p["frames_lost"].get<std::uint64_t>()), std::to_string(p["bad_frames"].get<std::uint64_t>()),
               std::to_string(p["garbage_bytes"].get<std::uint64_t>()), std::to_string(p["bad_lines"].get<std::uint64_t>()),
               std::to_string(p["reconnects"].get<std::uint64_t>()), std::to_string(p["gaps"].get<std::uint64_t>()),
               p["last_error"]});
      }
      t.Print();
      return Status::Ok();
    };
  });
}

}  // namespace rb::cli
