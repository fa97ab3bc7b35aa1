// Readings over TCP: loopback throughput with 1 and with 8 clients and acknowledgement latency,
// beside the file-ingest rate of the same rows measured in the same run.
//
//   build/tests/bench/tcp_bench [--rows N] [--bin-dir DIR] [--dir DIR] [--keep]
//
// Writes N invented readings (eight made-up sites, one reading a minute each, minute by minute;
// 400,000 by default) and then, each into a fresh database:
//   file   `stagewell ingest` of the CSV file (the yardstick), wall time of the command;
//   tcp 1  one connection sends every line as fast as the service takes them;
//   tcp 8  eight connections at once, one site each;
//   send   `stagewell send` of the file (the shipped client), wall time of the command;
//   live   one connection sending a reading every 5 ms for 5 s: acknowledgement latency of a
//          live feed, where the batch is committed by its age rather than its size.
// The tcp runs use a stagewelld started for them (default IngestorOptions: batches of 20,000
// readings or 1 s). Throughput is readings / (last `ok` - first byte sent). Latency of a line is
// the time from handing it to the socket to reading the `ok` that covers it; the connections
// together keep at most 40,000 lines unacknowledged (kWindowLines), and each half-closes once it
// has sent everything.
//
// Targets: tcp rate >= 0.5 x file rate (1 and 8 clients); p99 latency < 1 s (batch age) + 50 ms.
//
// A plain program, not a Google Benchmark loop: each figure is one run against a real service.
// Never run by ctest. Loopback only.
#include <fcntl.h>
#include <fmt/format.h>
#include <netinet/in.h>
#include <netinet/tcp.h>
#include <signal.h>
#include <spawn.h>
#include <sys/socket.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

extern char** environ;

namespace {

namespace fs = std::filesystem;
using Clock = std::chrono::steady_clock;

constexpr int kSites = 8;
constexpr double kTargetRatio = 0.5;
constexpr double kTargetP99Ms = 1000.0 + 50.0;
constexpr std::int64_t kStartMs = 1'704'067'200'000;  // 2024-01-01T00:00:00Z
// Lines the connections together may have sent and not had acknowledged: two batches of the
// service's default size (20,000 readings), shared equally. A real gateway keeps what has not been
// acknowledged, so it bounds this; without a bound, latency would measure how much the kernel's
// socket buffers hold rather than the service.
constexpr std::int64_t kWindowLines = 40'000;

[[noreturn]] void die(std::string_view what) {
  fmt::print(stderr, "tcp_bench: {}\n", what);
  std::exit(2);
}

double seconds_between(Clock::time_point a, Clock::time_point b) {
  return std::chrono::duration<double>(b - a).count();
}

std::string site_id(int k) { return fmt::format("bench-{}", k); }

// "2024-01-01T00:00:00Z" plus `minute` minutes.
std::string time_text(std::int64_t minute) {
  const std::time_t t = static_cast<std::time_t>((kStartMs / 1000) + minute * 60);
  std::tm tm{};
  ::gmtime_r(&t, &tm);
  return fmt::format("{:04}-{:02}-{:02}T{:02}:{:02}:00Z", tm.tm_year + 1900, tm.tm_mon + 1,
                     tm.tm_mday, tm.tm_hour, tm.tm_min);
}

// Invented stages: a slow swing and a daily one, different per site, millimetre resolution.
std::string reading(int site, std::int64_t minute) {
  const double stage = 0.5 + 0.2 * std::sin(minute / 4000.0 + site) +
                       0.03 * std::sin(minute * 2 * M_PI / 1440.0 + site);
  return fmt::format("{},{},{:.3f}", site_id(site), time_text(minute), stage);
}

std::string config_yaml(const fs::path& db, int port) {
  std::string out = fmt::format("units: metric\ndatabase: {}\n", db.string());
  if (port > 0) out += fmt::format("sources:\n  - type: tcp\n    listen: 127.0.0.1:{}\n", port);
  out += "sites:\n";
  for (int k = 0; k < kSites; ++k) {
    out += fmt::format(
        "  - id: {}\n    section: {{shape: trapezoidal, width: {}, side_slope: 1.5, height: 2}}\n"
        "    roughness: 0.02\n    slope: 0.0008\n",
        site_id(k), 1.0 + 0.5 * k);
  }
  return out;
}

void write_file(const fs::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
  if (!out) die("cannot write " + path.string());
}

int free_port() {
  const int fd = ::socket(AF_INET, SOCK_STREAM, 0);
  sockaddr_in address{};
  address.sin_family = AF_INET;
  address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  socklen_t length = sizeof address;
  if (::bind(fd, reinterpret_cast<sockaddr*>(&address), sizeof address) != 0 ||
      ::getsockname(fd, reinterpret_cast<sockaddr*>(&address), &length) != 0) {
    die("cannot find a free port");
  }
  ::close(fd);
  return ntohs(address.sin_port);
}

int connect_to(int port) {
  const int fd = ::socket(AF_INET, SOCK_STREAM, 0);
  sockaddr_in address{};
  address.sin_family = AF_INET;
  address.sin_port = htons(static_cast<std::uint16_t>(port));
  address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  if (::connect(fd, reinterpret_cast<sockaddr*>(&address), sizeof address) != 0) {
    ::close(fd);
    return -1;
  }
  const int one = 1;
  ::setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one);
  return fd;
}

void wait_listening(int port, const fs::path& log) {
  for (int tries = 0;; ++tries) {
    if (const int fd = connect_to(port); fd >= 0) {
      ::close(fd);
      return;
    }
    if (tries > 200) die("the service did not start; see " + log.string());
    std::this_thread::sleep_for(std::chrono::milliseconds(50));
  }
}

pid_t spawn(const std::vector<std::string>& args, const fs::path& log) {
  std::vector<char*> argv;
  for (const auto& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, STDOUT_FILENO, log.c_str(),
                                   O_WRONLY | O_CREAT | O_APPEND, 0644);
  posix_spawn_file_actions_adddup2(&actions, STDOUT_FILENO, STDERR_FILENO);
  pid_t pid = 0;
  if (::posix_spawn(&pid, argv[0], &actions, nullptr, argv.data(), environ) != 0) {
    die("cannot start " + args[0]);
  }
  posix_spawn_file_actions_destroy(&actions);
  return pid;
}

int wait_for(pid_t pid) {
  int status = 0;
  ::waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
}

// ---- one connection --------------------------------------------------------------------------

struct Connection {
  std::vector<std::string> lines;         // to send, header first
  std::vector<Clock::time_point> handed;  // when each line went to the socket
  std::vector<double> latency_ms;         // per acknowledged line
  Clock::time_point first_sent, last_ok;
  std::atomic<std::int64_t> acked{0};
  std::chrono::microseconds pace{0};   // 0: as fast as possible
  std::int64_t window = kWindowLines;  // lines sent and not yet acknowledged, at most
};

// Sends on this thread, reads `ok` replies on another; returns when every line is acknowledged.
void run_connection(Connection& c, int port) {
  const int fd = connect_to(port);
  if (fd < 0) die("cannot connect to the service");
  c.handed.resize(c.lines.size());
  c.latency_ms.reserve(c.lines.size());
  std::thread reader([&] {
    std::string buffer;
    char chunk[65536];
    while (c.acked < static_cast<std::int64_t>(c.lines.size())) {
      const ssize_t n = ::recv(fd, chunk, sizeof chunk, 0);
      if (n <= 0) die("the service closed a connection before acknowledging everything");
      const auto now = Clock::now();
      buffer.append(chunk, static_cast<std::size_t>(n));
      std::size_t start = 0;
      for (std::size_t end; (end = buffer.find('\n', start)) != std::string::npos;
           start = end + 1) {
        const std::string_view line(buffer.data() + start, end - start);
        if (!line.starts_with("ok ")) {
          if (line.starts_with("error ")) continue;
          die(fmt::format("unexpected reply: {}", line));
        }
        const std::int64_t n_ok = std::atoll(line.data() + 3);
        for (std::int64_t i = c.acked; i < n_ok; ++i) {
          c.latency_ms.push_back(
              std::chrono::duration<double, std::milli>(now - c.handed[i]).count());
        }
        c.acked = std::max(c.acked.load(), n_ok);
        c.last_ok = now;
      }
      buffer.erase(0, start);
    }
  });
  c.first_sent = Clock::now();
  std::string out;
  std::size_t i = 0;
  while (i < c.lines.size()) {
    out.clear();
    const std::size_t first = i;
    const std::size_t most = c.pace.count() > 0 ? 1 : 64 * 1024;
    while (static_cast<std::int64_t>(i) - c.acked >= c.window) {
      std::this_thread::sleep_for(std::chrono::microseconds(200));
    }
    while (i < c.lines.size() && out.size() < most) {
      out += c.lines[i++];
      out += '\n';
    }
    const auto now = Clock::now();
    for (std::size_t k = first; k < i; ++k) c.handed[k] = now;
    for (std::size_t sent = 0; sent < out.size();) {
      const ssize_t n = ::send(fd, out.data() + sent, out.size() - sent, MSG_NOSIGNAL);
      if (n <= 0) die("send failed");
      sent += static_cast<std::size_t>(n);
    }
    if (c.pace.count() > 0) std::this_thread::sleep_until(now + c.pace);
  }
  ::shutdown(fd, SHUT_WR);  // all sent: the service commits the last lines at once
  reader.join();
  ::close(fd);
}

struct TcpFigures {
  double rate = 0.0;  // readings per second
  double p50_ms = 0.0;
  double p99_ms = 0.0;
  double max_ms = 0.0;
};

double percentile(std::vector<double> values, double p) {
  if (values.empty()) return 0.0;
  std::sort(values.begin(), values.end());
  const auto index =
      static_cast<std::size_t>(std::ceil(p * static_cast<double>(values.size()))) - 1;
  return values[std::min(index, values.size() - 1)];
}

// Starts a service on a fresh database, runs `connections` at once, stops the service.
TcpFigures run_tcp(const fs::path& dir, const fs::path& bin, std::string_view name,
                   std::vector<Connection>& connections, std::int64_t readings) {
  const fs::path db = dir / fmt::format("{}.db", name);
  const int port = free_port();
  write_file(dir / fmt::format("{}.yaml", name), config_yaml(db, port));
  const pid_t daemon = spawn(
      {(bin / "stagewelld").string(), "--config", (dir / fmt::format("{}.yaml", name)).string()},
      dir / fmt::format("{}.log", name));
  wait_listening(port, dir / fmt::format("{}.log", name));
  std::vector<std::thread> threads;
  for (auto& c : connections)
    c.window = kWindowLines / static_cast<std::int64_t>(connections.size());
  for (auto& c : connections) threads.emplace_back([&c, port] { run_connection(c, port); });
  for (auto& t : threads) t.join();
  ::kill(daemon, SIGTERM);
  if (wait_for(daemon) != 0) die(fmt::format("the {} service did not stop cleanly", name));
  // A figure counts only if everything sent was stored (the service's closing summary says so).
  std::ifstream log(dir / fmt::format("{}.log", name));
  const std::string text((std::istreambuf_iterator<char>(log)), std::istreambuf_iterator<char>());
  if (text.find(fmt::format("stopped; {} readings stored", readings)) == std::string::npos) {
    die(fmt::format("the {} service did not store all {} readings; see its log", name, readings));
  }

  TcpFigures figures;
  Clock::time_point first = connections.front().first_sent, last = connections.front().last_ok;
  std::vector<double> latencies;
  for (const auto& c : connections) {
    first = std::min(first, c.first_sent);
    last = std::max(last, c.last_ok);
    latencies.insert(latencies.end(), c.latency_ms.begin(), c.latency_ms.end());
  }
  figures.rate = static_cast<double>(readings) / seconds_between(first, last);
  figures.p50_ms = percentile(latencies, 0.50);
  figures.p99_ms = percentile(latencies, 0.99);
  figures.max_ms = percentile(latencies, 1.0);
  return figures;
}

double timed_command(const std::vector<std::string>& args, const fs::path& log) {
  const auto start = Clock::now();
  const pid_t pid = spawn(args, log);
  if (const int code = wait_for(pid); code != 0) {
    die(fmt::format("{} exited with {}; see {}", args[0], code, log.string()));
  }
  return seconds_between(start, Clock::now());
}

struct Options {
  std::int64_t rows = 400'000;
  fs::path bin;
  fs::path dir;
  bool keep = false;
};

Options parse_arguments(int argc, char** argv) {
  Options options;
  for (int i = 1; i < argc; ++i) {
    const std::string_view arg = argv[i];
    const auto value = [&]() -> std::string {
      if (i + 1 >= argc) die(fmt::format("{} needs a value", arg));
      return argv[++i];
    };
    if (arg == "--rows") {
      options.rows = std::atoll(value().c_str());
    } else if (arg == "--bin-dir") {
      options.bin = value();
    } else if (arg == "--dir") {
      options.dir = value();
    } else if (arg == "--keep") {
      options.keep = true;
    } else {
      die("usage: tcp_bench [--rows N] [--bin-dir DIR] [--dir DIR] [--keep]");
    }
  }
  if (options.rows < kSites * 100) die("--rows must be at least 800");
  if (options.bin.empty()) {
    // build/tests/bench/tcp_bench -> build/daemon/
    options.bin =
        fs::read_symlink("/proc/self/exe").parent_path().parent_path().parent_path() / "daemon";
  }
  return options;
}

}  // namespace

int main(int argc, char** argv) {
  Options options = parse_arguments(argc, argv);
  bool made_dir = false;
  if (options.dir.empty()) {
    std::string pattern = (fs::temp_directory_path() / "stagewell-tcp-bench-XXXXXX").string();
    if (::mkdtemp(pattern.data()) == nullptr) die("cannot create a temporary directory");
    options.dir = pattern;
    made_dir = true;
  }
  const fs::path dir = fs::absolute(options.dir);
  fs::create_directories(dir);
  const fs::path bin = fs::absolute(options.bin);

  // The rows: minute by minute, every site each minute (as one gateway would send them all).
  const std::int64_t minutes = options.rows / kSites;
  const std::int64_t readings = minutes * kSites;
  std::vector<std::vector<std::string>> by_site(kSites);
  std::string file_text = "site,time,stage\n";
  std::vector<std::string> all_lines{"site,time,stage"};
  for (std::int64_t m = 0; m < minutes; ++m) {
    for (int k = 0; k < kSites; ++k) {
      std::string line = reading(k, m);
      file_text += line;
      file_text += '\n';
      by_site[k].push_back(line);
      all_lines.push_back(std::move(line));
    }
  }
  write_file(dir / "rows.csv", file_text);
  fmt::print("{} readings ({} sites x {} minutes) in {}\n", readings, kSites, minutes,
             dir.string());

  // The yardstick: `stagewell ingest` of the same rows into a fresh database.
  write_file(dir / "file.yaml", config_yaml(dir / "file.db", 0));
  const double file_s =
      timed_command({(bin / "stagewell").string(), "ingest", "--config",
                     (dir / "file.yaml").string(), "--quiet", (dir / "rows.csv").string()},
                    dir / "file.log");
  const double file_rate = static_cast<double>(readings) / file_s;
  fmt::print("file   stagewell ingest       {:>9.0f} readings/s ({:.2f} s)\n", file_rate, file_s);

  std::vector<Connection> one(1);
  one[0].lines = all_lines;
  const TcpFigures tcp1 = run_tcp(dir, bin, "tcp1", one, readings);

  std::vector<Connection> eight(kSites);
  for (int k = 0; k < kSites; ++k) {
    eight[k].lines.push_back("site,time,stage");
    eight[k].lines.insert(eight[k].lines.end(), by_site[k].begin(), by_site[k].end());
  }
  const TcpFigures tcp8 = run_tcp(dir, bin, "tcp8", eight, readings);

  // The shipped client, on a fresh service and database.
  double send_rate = 0.0;
  {
    const fs::path db = dir / "send.db";
    const int port = free_port();
    write_file(dir / "send.yaml", config_yaml(db, port));
    const pid_t daemon =
        spawn({(bin / "stagewelld").string(), "--config", (dir / "send.yaml").string()},
              dir / "send-daemon.log");
    wait_listening(port, dir / "send-daemon.log");
    const double s = timed_command({(bin / "stagewell").string(), "send", "--port",
                                    std::to_string(port), "--quiet", (dir / "rows.csv").string()},
                                   dir / "send.log");
    send_rate = static_cast<double>(readings) / s;
    ::kill(daemon, SIGTERM);
    wait_for(daemon);
  }

  // A live feed: one reading every 5 ms, each acknowledged once its batch is old enough.
  std::vector<Connection> live(1);
  live[0].pace = std::chrono::milliseconds(5);
  live[0].lines.push_back("site,time,stage");
  for (std::int64_t m = 0; m < 1000; ++m) live[0].lines.push_back(reading(0, m));
  const TcpFigures paced = run_tcp(dir, bin, "live", live, 1000);

  const auto row = [&](std::string_view label, const TcpFigures& f) {
    fmt::print(
        "{:<29}  {:>9.0f} readings/s ({:.2f} x file)   ack latency p50 {:.0f} ms, "
        "p99 {:.0f} ms, max {:.0f} ms\n",
        label, f.rate, f.rate / file_rate, f.p50_ms, f.p99_ms, f.max_ms);
  };
  row("tcp 1 connection", tcp1);
  row("tcp 8 connections", tcp8);
  fmt::print("{:<29}  {:>9.0f} readings/s ({:.2f} x file)\n", "stagewell send (1 connection)",
             send_rate, send_rate / file_rate);
  fmt::print("{:<29}  ack latency p50 {:.0f} ms, p99 {:.0f} ms, max {:.0f} ms\n",
             "live, 1 reading per 5 ms", paced.p50_ms, paced.p99_ms, paced.max_ms);

  bool met = true;
  const auto target = [&](std::string_view what, bool ok) {
    fmt::print("target {:<52} {}\n", what, ok ? "met" : "MISSED");
    met = met && ok;
  };
  target("tcp 1 connection >= 0.5 x file rate", tcp1.rate >= kTargetRatio * file_rate);
  target("tcp 8 connections >= 0.5 x file rate", tcp8.rate >= kTargetRatio * file_rate);
  target("p99 ack latency < 1050 ms (tcp 1)", tcp1.p99_ms < kTargetP99Ms);
  target("p99 ack latency < 1050 ms (tcp 8)", tcp8.p99_ms < kTargetP99Ms);
  target("p99 ack latency < 1050 ms (live)", paced.p99_ms < kTargetP99Ms);
  if (made_dir && !options.keep) fs::remove_all(dir);
  return met ? 0 : 1;
}
