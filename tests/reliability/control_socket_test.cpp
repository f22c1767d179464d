// Promise 5 (docs/design.md): the daemon's control socket takes commands only from its own
// user, and labels and paths are data, never code (prepared statements; no shell).
//   - motor labels full of quotes, SQL, shell and format metacharacters go through
//     `motor add`, `bench mount` (over the socket), the runs the daemon logs, `status` and
//     `run list` unchanged, with the whole bench (database, socket, config) in a directory
//     whose name is just as hostile; no command is run, no table dropped;
//   - a client of another user is refused: by the socket's permissions, and — with the
//     permissions opened up by hand — by the daemon's peer-credential check (needs root to
//     act as another user; skipped with a message otherwise);
//   - no product source calls a shell (system, popen, exec of sh).
#include <doctest/doctest.h>
#include <fcntl.h>
#include <poll.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <sys/wait.h>

#include <grp.h>

#include <cstring>
#include <set>
#include <filesystem>
#include <fstream>
#include <regex>

#include "tests/reliability/bench_harness.h"

using namespace rb;
using namespace rb::testing;

namespace {

/// As another user (uid/gid 65534, "nobody"), in a forked child: connects to `sock` and
/// sends `request`. Returns "connect: <errno text>" or the daemon's answer line.
std::string RequestAsNobody(const std::string& sock, const std::string& request) {
  int p[2];
  REQUIRE(::pipe(p) == 0);
  const pid_t pid = ::fork();
  REQUIRE(pid >= 0);
  if (pid == 0) {
    ::close(p[0]);
    auto say = [&](const char* s, std::size_t n) {
      (void)!::write(p[1], s, n);
      ::_exit(0);
    };
    if (::setgroups(0, nullptr) != 0 || ::setgid(65534) != 0 || ::setuid(65534) != 0) say("setuid failed", 13);
    const int fd = ::socket(AF_UNIX, SOCK_STREAM, 0);
    sockaddr_un addr{};
    addr.sun_family = AF_UNIX;
    std::memcpy(addr.sun_path, sock.c_str(), std::min(sock.size() + 1, sizeof addr.sun_path - 1));
    if (::connect(fd, reinterpret_cast<sockaddr*>(&addr), sizeof addr) != 0) {
      const char* e = std::strerror(errno);
      char buf[128] = "connect: ";
      std::strncat(buf, e, sizeof buf - 10);
      say(buf, std::strlen(buf));
    }
    (void)!::send(fd, request.data(), request.size(), MSG_NOSIGNAL);
    (void)!::send(fd, "\n", 1, MSG_NOSIGNAL);
    char buf[512];
    std::size_t n = 0;
    for (int k = 0; k < 30 && n < sizeof buf; ++k) {
      pollfd q{fd, POLLIN, 0};
      if (::poll(&q, 1, 100) <= 0) continue;
      const ssize_t r = ::recv(fd, buf + n, sizeof buf - n, 0);
      if (r <= 0) break;
      n += static_cast<std::size_t>(r);
      if (std::memchr(buf, '\n', n)) break;
    }
    say(buf, n);
  }
  ::close(p[1]);
  std::string out;
  char buf[512];
  for (ssize_t n; (n = ::read(p[0], buf, sizeof buf)) > 0;) out.append(buf, static_cast<std::size_t>(n));
  ::close(p[0]);
  int st = 0;
  ::waitpid(pid, &st, 0);
  while (!out.empty() && out.back() == '\n') out.pop_back();
  return out;
}

}  // namespace

TEST_CASE("labels and paths are data: quotes, SQL, shell and format metacharacters through the daemon") {
  // Files a shell or a format string would create if any of these were ever interpreted.
  TempDir witness;
  const std::string w = witness.path();
  const std::vector<std::string> labels = {
      "O'Brien \"7\"; DROP TABLE runs; --",
      "$(touch " + w + "/dollar)",
      "`touch " + w + "/backtick`",
      "a|b & c > " + w + "/redirect ; touch " + w + "/semicolon",
      "%s%n%x %99999999d {} {0}",
      "Motör №7 — 50 mΩ, 🌀",
      "x' OR '1'='1",
      "back\\slash\ttab",
  };
  RigBench b("first", "we'ird \"dir\" $(touch x) ;|&");
  for (const std::string& l : labels) {
    CommandResult r = RunRotorbench({"--db", b.db, "motor", "add", l});
    INFO(l << ": " << r.err);
    REQUIRE(r.exit_code == 0);
  }
  b.StartRig({"--auto-cycle", "0.6,0.4", "--friction", "2", "--max-seconds", "120"});
  b.StartDaemon();
  int runs_before = 0;
  for (const std::string& l : labels) {
    CAPTURE(l);
    CommandResult m = RunRotorbench({"bench", "mount", l, "--socket", b.sock});
    CHECK(m.exit_code == 0);
    CHECK(m.out == "motor " + l + " mounted\n");
    auto st = b.Status();
    REQUIRE(st);
    CHECK((*st)["motor"] == l);
    // The next run the daemon logs belongs to this motor.
    runs_before = (*st)["runs_started"];
    REQUIRE(WaitUntil(
        [&] {
          auto s = b.Status();
          return s && (*s)["runs_started"].get<int>() > runs_before && !(*s)["run"].is_null();
        },
        15));
  }
  // A label with a line break cannot smuggle a second request into the line protocol: the
  // client refuses to send it, and the mounted motor stays.
  REQUIRE(RunRotorbench({"--db", b.db, "motor", "add", "first\nunmount"}).exit_code == 0);
  CommandResult nl = RunRotorbench({"bench", "mount", "first\nunmount", "--socket", b.sock});
  CHECK(nl.exit_code == 1);
  CHECK(nl.err.find("line break") != std::string::npos);
  CHECK((*b.Status())["motor"] == labels.back());
  // A label that does not exist is refused by name, and changes nothing.
  CommandResult no = RunRotorbench({"bench", "mount", "nope'; DELETE FROM motors; --", "--socket", b.sock});
  CHECK(no.exit_code == 1);
  CHECK(no.err.find("motor 'nope'; DELETE FROM motors; --' not found") != std::string::npos);
  CHECK(b.daemon->Stop() == 0);
  b.sim->Stop();

  auto db = storage::Database::Open(b.db);
  REQUIRE(db.ok());
  CHECK(db->IntegrityCheck().ok());
  auto motors = db->ListMotors();
  REQUIRE(motors.ok());
  CHECK(motors->size() == labels.size() + 2);
  auto runs = db->ListRuns();
  REQUIRE(runs.ok());
  std::set<std::string> logged_for;
  for (const storage::Run& r : *runs) logged_for.insert(r.motor_label);
  for (const std::string& l : labels) {
    CAPTURE(l);
    CHECK(logged_for.count(l) == 1);
    CommandResult list = RunRotorbench({"--db", b.db, "run", "list", "--motor", l, "--json"});
    REQUIRE(list.exit_code == 0);
    const auto arr = nlohmann::json::parse(list.out);
    REQUIRE(!arr.empty());
    for (const auto& r : arr) CHECK(r["motor"] == l);
  }
  CommandResult ml = RunRotorbench({"--db", b.db, "motor", "list"});
  CHECK(ml.exit_code == 0);
  CHECK(ml.out.find("O'Brien \"7\"; DROP TABLE runs; --") != std::string::npos);
  // Nothing was ever run by a shell.
  CHECK(std::filesystem::is_empty(w));
  CHECK(!std::filesystem::exists("x"));
}

TEST_CASE("control socket: another user is refused, by permissions and by peer credentials") {
  if (::geteuid() != 0) {
    MESSAGE("skipped: acting as another user needs root (the CI runner and the container run as root)");
    return;
  }
  RigBench b;
  b.StartRig({"--max-seconds", "60"});
  b.StartDaemon();
  struct stat st {};
  REQUIRE(::stat(b.sock.c_str(), &st) == 0);
  CHECK((st.st_mode & 0777) == 0600);
  CHECK(st.st_uid == ::geteuid());
  // The same user (here root) is answered.
  CHECK(b.Status().has_value());
  // Another user cannot even reach it: the socket is user-only (and so is its directory).
  const std::string denied = RequestAsNobody(b.sock, "unmount");
  CHECK(denied.rfind("connect: ", 0) == 0);
  CHECK(denied.find("Permission denied") != std::string::npos);
  // Open the permissions by hand (a mistake an administrator could make): the daemon checks
  // the caller's credentials and still refuses, and nothing changes.
  ::chmod(b.dir.path().c_str(), 0755);
  ::chmod(b.sock.c_str(), 0666);
  const std::string refused = RequestAsNobody(b.sock, "unmount");
  INFO(refused);
  const auto j = nlohmann::json::parse(refused, nullptr, false);
  REQUIRE(!j.is_discarded());
  CHECK(j["ok"] == false);
  CHECK(j["error"] == "permission denied: not the daemon's user");
  auto s = b.Status();
  REQUIRE(s);
  CHECK((*s)["motor"] == "M1");  // the unmount was not obeyed
  CHECK(RequestAsNobody(b.sock, "status").find("permission denied") != std::string::npos);
  CHECK(b.daemon->Stop() == 0);
}

TEST_CASE("no product source calls a shell or builds a command line") {
  // Product code: every module folder and cli/ (tests, benchmarks and fuzzers are not shipped).
  const std::filesystem::path root = std::filesystem::path(ROTORBENCH_FIXTURES).parent_path();
  const std::regex shell(R"(\b(system|popen|execl|execlp|execle|execv|execvp|execve|posix_spawnp?|wordexp)\s*\()");
  int files = 0;
  std::vector<std::string> calls;
  for (const char* dir : {"base", "model", "storage", "acquire", "fit", "report", "qa", "rewind", "cli"}) {
    if (!std::filesystem::exists(root / dir)) continue;
    for (const auto& e : std::filesystem::recursive_directory_iterator(root / dir)) {
      const std::string ext = e.path().extension().string();
      if (ext != ".cpp" && ext != ".h") continue;
      ++files;
      std::ifstream f(e.path());
      std::string line;
      for (int n = 1; std::getline(f, line); ++n) {
        if (std::regex_search(line, shell)) calls.push_back(e.path().string() + ":" + std::to_string(n) + ": " + line);
      }
    }
  }
  for (const std::string& c : calls) FAIL_CHECK(c);
  CHECK(calls.empty());
  CHECK(files > 50);
}
