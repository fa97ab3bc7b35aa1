// The ingest pipeline in this process: its memory, and what keeping the daily figures costs.
//
//   build-bench/tests/bench/ingest_bench [--rows N] [--repeat K] [--dir DIR] [--keep]
//                                        [--ingest-only] [--write-only]
//
// --write-only writes the CSV file (full.csv) and its configuration (bench.yaml, database
// ingest.db) into --dir and stops: the files tests/bench/ingest_vs_plain.py times whole
// processes on (the yardstick, a plain SQLite insert of the same rows, is there).
// --ingest-only runs just the pipeline's ingest, in this process: for a profiler
// (`perf record`, `valgrind --tool=callgrind`).
//
// Writes an invented year of one-minute readings of four sites (synthetic_stage.hpp; 2,102,400
// readings by default) as one CSV file, and ingests it into a fresh database through the real
// pipeline: Ingestor + FileReader with default options, driven like `stagewell ingest` drives
// them, with and without the daily figures. Each ingest runs in a forked child so that its peak
// resident memory is its own. The same is done for a file a quarter the size, to show that memory
// does not grow with the file.
//
// Targets: peak RSS <= 64 MiB whatever the file size; keeping the daily figures current adds
// <= 10 % to the ingest time (judged per round: paired).
//
// A plain program, not a Google Benchmark loop: a 2-million-row ingest is measured a few times in
// separate processes, not looped over. Never run by ctest.
#include <fcntl.h>
#include <fmt/format.h>
#include <spdlog/spdlog.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"
#include "synthetic_stage.hpp"

namespace {

namespace fs = std::filesystem;
using namespace stagewell;
using Clock = std::chrono::steady_clock;

constexpr double kTargetRssMiB = 64.0;
constexpr double kTargetDailyOverhead = 0.10;  // keeping the daily figures current: +10 % at most

// The middle value (the mean of the two middle ones for an even count). REQUIRES: not empty.
double median(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  const std::size_t n = values.size();
  return n % 2 == 1 ? values[n / 2] : (values[n / 2 - 1] + values[n / 2]) / 2.0;
}

[[noreturn]] void die(std::string_view what) {
  fmt::print(stderr, "ingest_bench: {}\n", what);
  std::exit(2);
}

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// CPU time (user + system) this process has used, s. Other work on the machine slows the wall
// clock but not this, so it shows whether a change helped when the machine is busy.
double cpu_seconds() {
  rusage usage{};
  ::getrusage(RUSAGE_SELF, &usage);
  const auto s = [](const timeval& t) { return static_cast<double>(t.tv_sec) + t.tv_usec * 1e-6; };
  return s(usage.ru_utime) + s(usage.ru_stime);
}

// A "VmHWM:   12345 kB" line of /proc/self/status, in KiB; -1 when absent.
long status_kib(std::string_view key) {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line)) {
    if (line.starts_with(key) && line.size() > key.size() && line[key.size()] == ':') {
      return std::strtol(line.c_str() + key.size() + 1, nullptr, 10);
    }
  }
  return -1;
}

// Resets the process's peak RSS to its current RSS (Linux 4.0+), so that VmHWM measures what
// follows. False when the kernel does not allow it.
bool reset_peak_rss() {
  const int fd = ::open("/proc/self/clear_refs", O_WRONLY | O_CLOEXEC);
  if (fd < 0) return false;
  const bool ok = ::write(fd, "5", 1) == 1;
  ::close(fd);
  return ok;
}

// Writes `rows` readings (rounded down to whole minutes of all sites) as CSV.
std::int64_t write_csv(const fs::path& path, std::int64_t rows) {
  std::FILE* file = std::fopen(path.c_str(), "wb");
  if (file == nullptr) die(fmt::format("cannot write {}: {}", path.string(), std::strerror(errno)));
  bench::StageSeries series;
  std::string buffer(bench::kCsvHeader);
  const std::int64_t whole = rows / bench::kSites * bench::kSites;
  for (std::int64_t i = 0; i < whole; ++i) {
    bench::append_csv_line(buffer, series.next());
    if (buffer.size() > (1 << 20)) {
      std::fwrite(buffer.data(), 1, buffer.size(), file);
      buffer.clear();
    }
  }
  std::fwrite(buffer.data(), 1, buffer.size(), file);
  if (std::fclose(file) != 0) die(fmt::format("cannot write {}", path.string()));
  return whole;
}

Config bench_config(const fs::path& dir, const fs::path& database) {
  auto config = parse_config(bench::bench_config_yaml(database.string()), "ingest_bench.yaml", dir);
  if (!config) die("the benchmark configuration is invalid: " + config.error().front().to_string());
  return *config;
}

// What a child reports about its ingest (written through a pipe).
struct IngestFigures {
  std::int64_t stored = 0;
  std::int64_t rejected = 0;
  std::int64_t flagged = 0;  // flags set, summed over flag names
  std::int64_t commits = 0;
  double seconds = 0.0;
  double cpu_seconds = 0.0;
  long start_kib = 0;  // RSS when the ingest began
  long peak_kib = 0;   // VmHWM at the end
  bool peak_reset = false;
  char error[256] = {};
};

// The ingest itself, as `stagewell ingest` runs it (daemon/cli/cmd_ingest.cpp).
IngestFigures ingest(const Config& config, const fs::path& csv, const IngestorOptions& options) {
  IngestFigures figures;
  const auto failed = [&](const Error& error) {
    std::snprintf(figures.error, sizeof figures.error, "%s", error.message.c_str());
    return figures;
  };
  figures.peak_reset = reset_peak_rss();
  figures.start_kib = status_kib("VmRSS");
  const auto start = Clock::now();
  const double start_cpu = cpu_seconds();
  auto ingestor = Ingestor::open(config, options, system_now_ms);
  if (!ingestor) return failed(ingestor.error());
  SourceSpec spec;  // a file with a site column and UTC times, as `stagewell ingest` reads it
  auto reader = FileReader::open(csv, spec, "ingest:" + csv.string(), **ingestor);
  if (!reader) return failed(reader.error());
  for (;;) {
    auto finished = (*reader)->step(kReadChunkBytes * 4);
    if (!finished) return failed(finished.error());
    if ((*ingestor)->commit_due() || *finished) {
      if (auto committed = (*ingestor)->commit(); !committed) return failed(committed.error());
    }
    if (*finished) break;
  }
  figures.seconds = seconds_since(start);
  figures.cpu_seconds = cpu_seconds() - start_cpu;
  figures.peak_kib = status_kib("VmHWM");
  const auto& counts = (*ingestor)->counts();
  figures.stored = counts.stored;
  figures.rejected = counts.rejected;
  for (const auto& [flag, count] : counts.flagged_by_flag) figures.flagged += count;
  figures.commits = counts.commits;
  return figures;
}

// Runs `work` in a forked child and returns its result, a plain struct sent back through a pipe.
// The parent keeps its own memory small (no rows in memory), so that the child's peak RSS shows
// the child's work.
template <typename T, typename Work>
T in_child(Work work) {
  int fds[2];
  if (::pipe(fds) != 0) die("pipe failed");
  std::fflush(nullptr);
  const pid_t pid = ::fork();
  if (pid < 0) die("fork failed");
  if (pid == 0) {
    ::close(fds[0]);
    const T result = work();
    const bool sent = ::write(fds[1], &result, sizeof result) == sizeof result;
    ::_exit(sent ? 0 : 1);
  }
  ::close(fds[1]);
  T result{};
  const ssize_t got = ::read(fds[0], &result, sizeof result);
  ::close(fds[0]);
  int status = 0;
  ::waitpid(pid, &status, 0);
  if (got != static_cast<ssize_t>(sizeof result) || !WIFEXITED(status) ||
      WEXITSTATUS(status) != 0) {
    die("a benchmark child process failed");
  }
  return result;
}

IngestFigures ingest_in_child(const Config& config, const fs::path& csv,
                              const IngestorOptions& options) {
  const auto figures = in_child<IngestFigures>([&] { return ingest(config, csv, options); });
  if (figures.error[0] != '\0') {
    die(fmt::format("ingest of {} failed: {}", csv.string(), figures.error));
  }
  return figures;
}

double mib(long kib) { return static_cast<double>(kib) / 1024.0; }

struct Options {
  std::int64_t rows = bench::kSites * bench::kMinutesPerYear;  // 2,102,400
  fs::path dir;
  bool keep = false;
  bool ingest_only = false;
  bool write_only = false;
  int repeat = 5;
};

Options parse_arguments(int argc, char** argv) {
  Options options;
  for (int i = 1; i < argc; ++i) {
    const std::string_view arg = argv[i];
    if (arg == "--rows" && i + 1 < argc) {
      options.rows = std::strtoll(argv[++i], nullptr, 10);
      if (options.rows < 4 * bench::kSites) die("--rows: at least 16");
    } else if (arg == "--dir" && i + 1 < argc) {
      options.dir = argv[++i];
    } else if (arg == "--keep") {
      options.keep = true;
    } else if (arg == "--ingest-only") {
      options.ingest_only = true;
    } else if (arg == "--write-only") {
      options.write_only = true;
    } else if (arg == "--repeat" && i + 1 < argc) {
      options.repeat = std::max(1, std::atoi(argv[++i]));
    } else {
      die("usage: ingest_bench [--rows N] [--repeat K] [--dir DIR] [--keep] [--ingest-only] "
          "[--write-only]");
    }
  }
  return options;
}

void remove_databases(const fs::path& dir) {
  for (const char* name : {"full.db", "quarter.db", "full-no-daily.db"}) {
    for (const char* suffix : {"", "-wal", "-shm"}) fs::remove(dir / (std::string(name) + suffix));
  }
}

// Every line is a good reading: anything else means the benchmark measured the wrong thing.
void expect_stored(const IngestFigures& figures, std::int64_t rows) {
  if (figures.stored != rows || figures.rejected != 0) {
    die(fmt::format("an ingest stored {} readings and rejected {}; expected {} and 0",
                    figures.stored, figures.rejected, rows));
  }
}

}  // namespace

int main(int argc, char** argv) {
  Options options = parse_arguments(argc, argv);
  spdlog::set_level(spdlog::level::warn);
  bool made_dir = false;
  if (options.dir.empty()) {
    std::string pattern = (fs::temp_directory_path() / "stagewell-ingest-bench-XXXXXX").string();
    if (::mkdtemp(pattern.data()) == nullptr) die("cannot create a temporary directory");
    options.dir = pattern;
    made_dir = true;
  } else {
    fs::create_directories(options.dir);
  }
  const fs::path dir = fs::absolute(options.dir);
  remove_databases(dir);

  fmt::print("writing the CSV files in {} ...\n", dir.string());
  const std::int64_t rows = write_csv(dir / "full.csv", options.rows);
  if (options.write_only) {
    std::ofstream yaml(dir / "bench.yaml");
    yaml << bench::bench_config_yaml((dir / "ingest.db").string());
    if (!yaml.flush()) die("cannot write bench.yaml");
    fmt::print("{} readings in {}, configuration in {}\n", rows, (dir / "full.csv").string(),
               (dir / "bench.yaml").string());
    return 0;
  }
  const IngestorOptions defaults;

  const Config full_config = bench_config(dir, dir / "full.db");
  if (options.ingest_only) {
    const IngestFigures figures = ingest(full_config, dir / "full.csv", defaults);
    if (figures.error[0] != '\0') die(figures.error);
    fmt::print("ingest: {} readings in {:.2f} s: {:.0f} readings/s\n", figures.stored,
               figures.seconds, static_cast<double>(figures.stored) / figures.seconds);
    if (made_dir && !options.keep) fs::remove_all(dir);
    return 0;
  }
  const std::int64_t quarter_rows = write_csv(dir / "quarter.csv", options.rows / 4);
  IngestorOptions no_daily = defaults;
  no_daily.keep_daily = false;

  // Rounds: each ingests the full file with and without the daily figures, one after the other,
  // so that both meet the same load on the machine, in alternating order. The overhead is judged on
  // the median over rounds of each round's own ratio (paired); the table shows the fastest of each.
  // The yardstick (a plain SQLite insert of the same rows, as whole processes) is
  // ingest_vs_plain.py's.
  IngestFigures full, bare;
  std::vector<double> daily_overhead;  // ingest seconds / ingest-without-daily seconds - 1
  for (int round = 1; round <= options.repeat; ++round) {
    remove_databases(dir);
    // In alternating order: the first run of a round pays for the removal of the last round's
    // files (their pages still being written back), which made the daily figures look twice as
    // costly when the run with them always went first.
    IngestFigures f, b;
    const auto with_daily = [&] { f = ingest_in_child(full_config, dir / "full.csv", defaults); };
    const auto without_daily = [&] {
      b = ingest_in_child(bench_config(dir, dir / "full-no-daily.db"), dir / "full.csv", no_daily);
    };
    if (round % 2 == 1) {
      with_daily();
      without_daily();
    } else {
      without_daily();
      with_daily();
    }
    expect_stored(f, rows);
    expect_stored(b, rows);
    fmt::print("round {}: ingest {:.2f} s, without daily figures {:.2f} s\n", round, f.seconds,
               b.seconds);
    daily_overhead.push_back(f.seconds / b.seconds - 1.0);
    const long peak_kib = std::max(full.peak_kib, f.peak_kib);
    if (round == 1 || f.seconds < full.seconds) full = f;
    full.peak_kib = peak_kib;
    if (round == 1 || b.seconds < bare.seconds) bare = b;
  }
  remove_databases(dir);
  const IngestFigures quarter =
      ingest_in_child(bench_config(dir, dir / "quarter.db"), dir / "quarter.csv", defaults);
  expect_stored(quarter, quarter_rows);

  fmt::print(
      "\nstagewell ingest benchmark: {} readings ({} sites, one a minute), batches of {}; "
      "best of {}\n",
      rows, bench::kSites, defaults.max_batch_readings, options.repeat);
  fmt::print("{:<30}{:>9}{:>9}{:>10}{:>11}{:>11}\n", "", "rows", "seconds", "rows/s", "CPU us/row",
             "peak RSS");
  const auto line = [&](std::string_view what, std::int64_t n, double seconds, double cpu,
                        std::string rss) {
    const double per_second = static_cast<double>(n) / seconds;
    const double cpu_us = cpu * 1e6 / static_cast<double>(n);
    fmt::print("{:<30}{:>9}{:>9.2f}{:>10.0f}{:>11.2f}{:>11}\n", what, n, seconds, per_second,
               cpu_us, rss);
  };
  const auto rss = [](const IngestFigures& f) {
    return fmt::format("{:.1f} MiB", mib(f.peak_kib));
  };
  line("ingest (pipeline, defaults)", full.stored, full.seconds, full.cpu_seconds, rss(full));
  line("ingest, file 1/4 the size", quarter.stored, quarter.seconds, quarter.cpu_seconds,
       rss(quarter));
  line("ingest, daily figures off", bare.stored, bare.seconds, bare.cpu_seconds, rss(bare));

  const double overhead = median(daily_overhead);
  const double peak = std::max(mib(full.peak_kib), mib(quarter.peak_kib));
  fmt::print("\nflags set: {} (by name, summed); commits: {}\n", full.flagged, full.commits);
  fmt::print("RSS at the start of each ingest: {:.1f} MiB{}\n", mib(full.start_kib),
             full.peak_reset ? " (peak reset there via /proc/self/clear_refs)"
                             : " (peak could not be reset: it includes the start)");
  fmt::print("target: daily figures add <= {:.0f} %    {:+.1f} % (median of {} rounds)    {}\n",
             kTargetDailyOverhead * 100, overhead * 100, daily_overhead.size(),
             overhead <= kTargetDailyOverhead ? "met" : "MISSED");
  fmt::print("target: peak RSS <= {:.0f} MiB     {:.1f} MiB (full) / {:.1f} MiB (1/4)    {}\n",
             kTargetRssMiB, mib(full.peak_kib), mib(quarter.peak_kib),
             peak <= kTargetRssMiB ? "met" : "MISSED");

  if (made_dir && !options.keep) {
    std::error_code ignored;
    fs::remove_all(dir, ignored);
  }
  return 0;
}
