// Ingest throughput and memory, against what SQLite alone can do with the same rows.
//
//   build-bench/tests/bench/ingest_bench [--rows N] [--repeat K] [--dir DIR] [--keep]
//                                        [--ingest-only]
//
// --ingest-only runs just the pipeline's ingest, in this process: for a profiler
// (`perf record`, `valgrind --tool=callgrind`).
//
// Writes an invented year of one-minute readings of four sites (synthetic_stage.hpp; 2,102,400
// readings by default) as one CSV file, and ingests it into a fresh database through the real
// pipeline: Ingestor + FileReader with default options, driven like `stagewell ingest` drives
// them. Each ingest runs in a forked child so that its peak resident memory is its own. The same
// is done for a file a quarter the size, to show that memory does not grow with the file.
//
// Then, as the yardstick, the rows the ingest stored are read back into memory and inserted into
// the `readings` table of another fresh database with nothing else done (in a child as well): one
// prepared INSERT, one transaction per batch of the ingest's batch size, the store's open flags
// and pragmas (WAL, synchronous=NORMAL, foreign_keys=ON). Each round runs the ingest and then the
// yardstick, so that the two meet the same load on the machine; the best of each is reported.
//
// Targets: ingest >= 0.7 x the raw rate; peak RSS <= 64 MiB whatever the file size; keeping the
// daily figures current adds <= 10 % to the ingest time. Ratios are judged per round (paired).
//
// A plain program, not a Google Benchmark loop: a 2-million-row ingest is measured a few times in
// separate processes, not looped over. Never run by ctest.
#include <fcntl.h>
#include <fmt/format.h>
#include <spdlog/spdlog.h>
#include <sqlite3.h>
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

constexpr double kTargetRatio = 0.7;
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

// A row of `readings`, as stored.
struct Row {
  std::int64_t site_key, time_ms;
  double stage, depth;
  std::optional<double> discharge;
  std::int64_t flags, config_id;
};

void check_sqlite(int rc, sqlite3* db, std::string_view doing) {
  if (rc != SQLITE_OK && rc != SQLITE_DONE && rc != SQLITE_ROW) {
    die(fmt::format("SQLite error while {}: {}", doing, sqlite3_errmsg(db)));
  }
}

void exec(sqlite3* db, const char* sql) {
  check_sqlite(sqlite3_exec(db, sql, nullptr, nullptr, nullptr), db, sql);
}

// The stored readings in the order the file had them (minute by minute, sites in key order).
std::vector<Row> read_back(const fs::path& database) {
  sqlite3* db = nullptr;
  check_sqlite(sqlite3_open_v2(database.c_str(), &db, SQLITE_OPEN_READONLY, nullptr), db, "open");
  sqlite3_stmt* select = nullptr;
  check_sqlite(sqlite3_prepare_v2(db,
                                  "SELECT site_key, time_ms, stage, depth, discharge, flags, "
                                  "config_id FROM readings ORDER BY time_ms, site_key",
                                  -1, &select, nullptr),
               db, "prepare the read-back");
  std::vector<Row> rows;
  while (sqlite3_step(select) == SQLITE_ROW) {
    Row row{sqlite3_column_int64(select, 0),
            sqlite3_column_int64(select, 1),
            sqlite3_column_double(select, 2),
            sqlite3_column_double(select, 3),
            std::nullopt,
            sqlite3_column_int64(select, 5),
            sqlite3_column_int64(select, 6)};
    if (sqlite3_column_type(select, 4) != SQLITE_NULL)
      row.discharge = sqlite3_column_double(select, 4);
    rows.push_back(row);
  }
  sqlite3_finalize(select);
  sqlite3_close(db);
  return rows;
}

// The timed part of the yardstick. Not inlined, so that a profiler can tell it apart.
[[gnu::noinline]] void insert_rows(sqlite3* db, sqlite3_stmt* insert, const std::vector<Row>& rows,
                                   std::int64_t batch_rows) {
  for (std::size_t first = 0; first < rows.size(); first += static_cast<std::size_t>(batch_rows)) {
    const std::size_t last = std::min(rows.size(), first + static_cast<std::size_t>(batch_rows));
    exec(db, "BEGIN IMMEDIATE");
    for (std::size_t i = first; i < last; ++i) {
      const Row& row = rows[i];
      sqlite3_bind_int64(insert, 1, row.site_key);
      sqlite3_bind_int64(insert, 2, row.time_ms);
      sqlite3_bind_double(insert, 3, row.stage);
      sqlite3_bind_double(insert, 4, row.depth);
      if (row.discharge) {
        sqlite3_bind_double(insert, 5, *row.discharge);
      } else {
        sqlite3_bind_null(insert, 5);
      }
      sqlite3_bind_int64(insert, 6, row.flags);
      sqlite3_bind_int64(insert, 7, row.config_id);
      check_sqlite(sqlite3_step(insert), db, "insert");
      sqlite3_reset(insert);
    }
    exec(db, "COMMIT");
  }
}

// A fresh database with the store's schema, sites and configuration versions (so that the
// foreign keys of `readings` hold), then the rows inserted with nothing else done.
struct Timing {
  double seconds = 0.0;
  double cpu_seconds = 0.0;
};
Timing raw_insert(const Config& config, const fs::path& database, const std::vector<Row>& rows,
                  std::int64_t batch_rows) {
  {
    auto store = Store::open(database);
    if (!store) die(store.error().message);
    for (const auto& site : config.sites) {
      auto key = store->sites().ensure(site.id);
      if (!key) die(key.error().message);
      if (auto version = store->versions().record(*key, "{}", 0); !version) {
        die(version.error().message);
      }
    }
  }
  sqlite3* db = nullptr;
  // The store's open flags and pragmas (lib/src/store/sqlite.cpp and store.cpp).
  check_sqlite(
      sqlite3_open_v2(database.c_str(), &db,
                      SQLITE_OPEN_READWRITE | SQLITE_OPEN_NOMUTEX | SQLITE_OPEN_EXRESCODE, nullptr),
      db, "open");
  // The store's pragmas (lib/src/store/store.cpp, configure_writer).
  exec(db, "PRAGMA journal_mode = WAL");
  exec(db, "PRAGMA synchronous = NORMAL");
  exec(db, "PRAGMA foreign_keys = ON");
  sqlite3_stmt* insert = nullptr;
  check_sqlite(
      sqlite3_prepare_v2(db,
                         "INSERT INTO readings (site_key, time_ms, stage, depth, "
                         "discharge, flags, config_id) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
                         -1, &insert, nullptr),
      db, "prepare the insert");
  const auto start = Clock::now();
  const double start_cpu = cpu_seconds();
  insert_rows(db, insert, rows, batch_rows);
  const Timing timing{seconds_since(start), cpu_seconds() - start_cpu};
  sqlite3_finalize(insert);
  sqlite3_close(db);
  return timing;
}

double mib(long kib) { return static_cast<double>(kib) / 1024.0; }

struct Options {
  std::int64_t rows = bench::kSites * bench::kMinutesPerYear;  // 2,102,400
  fs::path dir;
  bool keep = false;
  bool ingest_only = false;
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
    } else if (arg == "--repeat" && i + 1 < argc) {
      options.repeat = std::max(1, std::atoi(argv[++i]));
    } else {
      die("usage: ingest_bench [--rows N] [--repeat K] [--dir DIR] [--keep] [--ingest-only]");
    }
  }
  return options;
}

void remove_databases(const fs::path& dir) {
  for (const char* name : {"full.db", "quarter.db", "raw.db", "full-no-daily.db"}) {
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

  // Rounds: each ingests the full file (with and without the daily figures) and runs the
  // yardstick right after, so that all three meet the same load on the machine. The targets are
  // judged on the median over rounds of each round's own ratio (paired: a burst of other work on
  // the machine slows one round's runs together, not one run of the best-of table against
  // another round's). The table shows the fastest of each: the runs least disturbed.
  IngestFigures full, bare;
  Timing raw;
  std::vector<double> ratios;          // raw seconds / ingest seconds, per round
  std::vector<double> daily_overhead;  // ingest seconds / ingest-without-daily seconds - 1
  for (int round = 1; round <= options.repeat; ++round) {
    remove_databases(dir);
    const IngestFigures f = ingest_in_child(full_config, dir / "full.csv", defaults);
    expect_stored(f, rows);
    const IngestFigures b =
        ingest_in_child(bench_config(dir, dir / "full-no-daily.db"), dir / "full.csv", no_daily);
    expect_stored(b, rows);
    const Timing r = in_child<Timing>([&] {
      const std::vector<Row> stored = read_back(dir / "full.db");
      if (static_cast<std::int64_t>(stored.size()) != rows) die("the read-back lost rows");
      return raw_insert(full_config, dir / "raw.db", stored, defaults.max_batch_readings);
    });
    fmt::print(
        "round {}: ingest {:.2f} s, without daily figures {:.2f} s, raw {:.2f} s: "
        "{:.2f} x raw\n",
        round, f.seconds, b.seconds, r.seconds, r.seconds / f.seconds);
    ratios.push_back(r.seconds / f.seconds);
    daily_overhead.push_back(f.seconds / b.seconds - 1.0);
    const long peak_kib = std::max(full.peak_kib, f.peak_kib);
    if (round == 1 || f.seconds < full.seconds) full = f;
    full.peak_kib = peak_kib;
    if (round == 1 || b.seconds < bare.seconds) bare = b;
    if (round == 1 || r.seconds < raw.seconds) raw = r;
  }
  remove_databases(dir);
  const IngestFigures quarter =
      ingest_in_child(bench_config(dir, dir / "quarter.db"), dir / "quarter.csv", defaults);
  expect_stored(quarter, quarter_rows);

  const double raw_rate = static_cast<double>(rows) / raw.seconds;
  const double raw_cpu_us = raw.cpu_seconds * 1e6 / static_cast<double>(rows);
  fmt::print(
      "\nstagewell ingest benchmark: {} readings ({} sites, one a minute), batches of {}; "
      "best of {}\n",
      rows, bench::kSites, defaults.max_batch_readings, options.repeat);
  fmt::print("{:<30}{:>9}{:>9}{:>10}{:>7}{:>11}{:>7}{:>11}\n", "", "rows", "seconds", "rows/s",
             "x raw", "CPU us/row", "x raw", "peak RSS");
  const auto line = [&](std::string_view what, std::int64_t n, double seconds, double cpu,
                        std::string rss) {
    const double per_second = static_cast<double>(n) / seconds;
    const double cpu_us = cpu * 1e6 / static_cast<double>(n);
    fmt::print("{:<30}{:>9}{:>9.2f}{:>10.0f}{:>7.2f}{:>11.2f}{:>7.2f}{:>11}\n", what, n, seconds,
               per_second, per_second / raw_rate, cpu_us, raw_cpu_us / cpu_us, rss);
  };
  const auto rss = [](const IngestFigures& f) {
    return fmt::format("{:.1f} MiB", mib(f.peak_kib));
  };
  line("ingest (pipeline, defaults)", full.stored, full.seconds, full.cpu_seconds, rss(full));
  line("ingest, file 1/4 the size", quarter.stored, quarter.seconds, quarter.cpu_seconds,
       rss(quarter));
  line("ingest, daily figures off", bare.stored, bare.seconds, bare.cpu_seconds, rss(bare));
  line("raw SQLite INSERT, same rows", rows, raw.seconds, raw.cpu_seconds, "-");

  const double ratio = median(ratios);
  const double overhead = median(daily_overhead);
  const double peak = std::max(mib(full.peak_kib), mib(quarter.peak_kib));
  fmt::print("\nflags set: {} (by name, summed); commits: {}\n", full.flagged, full.commits);
  fmt::print("RSS at the start of each ingest: {:.1f} MiB{}\n", mib(full.start_kib),
             full.peak_reset ? " (peak reset there via /proc/self/clear_refs)"
                             : " (peak could not be reset: it includes the start)");
  fmt::print("target: ingest >= {:.1f} x raw    {:.2f} (median of {} rounds' ratios)    {}\n",
             kTargetRatio, ratio, ratios.size(), ratio >= kTargetRatio ? "met" : "MISSED");
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
