// The yardstick for `stagewell ingest`: what SQLite alone does with the same rows.
//
//   plain_insert CSV DATABASE
//
// Reads a `site,time,stage` CSV file (times as `YYYY-MM-DDTHH:MM:SSZ`, as the ingest benchmark
// writes them) and inserts one row per line into a fresh database, with nothing of stagewell in
// it: a plain table
//
//   (site INTEGER, time INTEGER, stage REAL, discharge REAL, flags INTEGER,
//    PRIMARY KEY (site, time)) WITHOUT ROWID
//
// one prepared INSERT, WAL, synchronous=NORMAL, the default page size, 10,000 rows a transaction.
// The site is numbered in order of first appearance, the time is in ms since the epoch, the
// discharge is Manning's equation for a wide rectangle 2 m wide (n = 0.014, S = 0.001) at the
// stage as depth, so that each row carries a computed value of the same size as stagewell's.
//
// It links SQLite and the C++ standard library only (no stagewell code, no stagewell schema): a
// measure that shares none of the project's overheads. tests/bench/ingest_vs_plain.py runs it
// against `stagewell ingest` as whole processes. Exit status 0 on success, 2 on any error.
#include <sqlite3.h>

#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

namespace {

constexpr int kRowsPerTransaction = 10'000;

[[noreturn]] void die(const std::string& what) {
  std::fprintf(stderr, "plain_insert: %s\n", what.c_str());
  std::exit(2);
}

void exec(sqlite3* db, const char* sql) {
  char* message = nullptr;
  if (sqlite3_exec(db, sql, nullptr, nullptr, &message) != SQLITE_OK) {
    const std::string text = message != nullptr ? message : "?";
    sqlite3_free(message);
    die(std::string(sql) + ": " + text);
  }
}

int digits(std::string_view text, std::size_t at, std::size_t count) {
  int value = 0;
  for (std::size_t i = at; i < at + count; ++i) {
    const char c = text[i];
    if (c < '0' || c > '9') die("not a time: " + std::string(text));
    value = value * 10 + (c - '0');
  }
  return value;
}

// `YYYY-MM-DDTHH:MM:SSZ` as ms since the epoch.
std::int64_t parse_time(std::string_view text) {
  if (text.size() != 20 || text[4] != '-' || text[7] != '-' || text[10] != 'T' || text[13] != ':' ||
      text[16] != ':' || text[19] != 'Z') {
    die("not a time: " + std::string(text));
  }
  using namespace std::chrono;
  const year_month_day date{year(digits(text, 0, 4)), month(digits(text, 5, 2)),
                            day(digits(text, 8, 2))};
  const std::int64_t day_s = sys_days(date).time_since_epoch().count() * 86'400LL;
  const int second = digits(text, 11, 2) * 3600 + digits(text, 14, 2) * 60 + digits(text, 17, 2);
  return (day_s + second) * 1000;
}

double discharge(double depth) {
  if (depth <= 0.0) return 0.0;
  constexpr double width = 2.0, n = 0.014, slope = 0.001;
  const double area = width * depth;
  const double radius = area / (width + 2.0 * depth);
  return area * std::pow(radius, 2.0 / 3.0) * std::sqrt(slope) / n;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: plain_insert CSV DATABASE\n");
    return 2;
  }
  std::FILE* in = std::fopen(argv[1], "rb");
  if (in == nullptr) die(std::string("cannot open ") + argv[1] + ": " + std::strerror(errno));
  std::remove(argv[2]);
  sqlite3* db = nullptr;
  if (sqlite3_open(argv[2], &db) != SQLITE_OK) die(std::string("cannot open ") + argv[2]);
  exec(db, "PRAGMA journal_mode=WAL");
  exec(db, "PRAGMA synchronous=NORMAL");
  exec(db,
       "CREATE TABLE readings (site INTEGER, time INTEGER, stage REAL, discharge REAL, "
       "flags INTEGER, PRIMARY KEY (site, time)) WITHOUT ROWID");
  sqlite3_stmt* insert = nullptr;
  if (sqlite3_prepare_v2(db, "INSERT INTO readings VALUES (?, ?, ?, ?, ?)", -1, &insert, nullptr) !=
      SQLITE_OK) {
    die(sqlite3_errmsg(db));
  }

  std::vector<std::string> sites;
  std::vector<char> buffer(1 << 20);
  std::string pending;  // a line cut by the end of a read
  std::int64_t rows = 0;
  bool header = true;
  exec(db, "BEGIN");
  const auto row = [&](std::string_view line) {
    if (header) {
      header = false;
      return;
    }
    const std::size_t first = line.find(',');
    const std::size_t second = line.find(',', first + 1);
    if (first == std::string_view::npos || second == std::string_view::npos) {
      die("not a site,time,stage line: " + std::string(line));
    }
    const std::string_view site = line.substr(0, first);
    std::size_t key = 0;
    while (key < sites.size() && sites[key] != site) ++key;
    if (key == sites.size()) sites.emplace_back(site);
    const std::int64_t time_ms = parse_time(line.substr(first + 1, second - first - 1));
    const std::string stage_text(line.substr(second + 1));
    char* end = nullptr;
    const double stage = std::strtod(stage_text.c_str(), &end);
    if (end == stage_text.c_str() || *end != '\0') die("not a stage: " + stage_text);
    sqlite3_bind_int64(insert, 1, static_cast<sqlite3_int64>(key + 1));
    sqlite3_bind_int64(insert, 2, time_ms);
    sqlite3_bind_double(insert, 3, stage);
    sqlite3_bind_double(insert, 4, discharge(stage));
    sqlite3_bind_int(insert, 5, 0);
    if (sqlite3_step(insert) != SQLITE_DONE) die(sqlite3_errmsg(db));
    sqlite3_reset(insert);
    if (++rows % kRowsPerTransaction == 0) {
      exec(db, "COMMIT");
      exec(db, "BEGIN");
    }
  };
  for (;;) {
    const std::size_t got = std::fread(buffer.data(), 1, buffer.size(), in);
    if (got == 0) break;
    std::string_view chunk(buffer.data(), got);
    for (std::size_t end; (end = chunk.find('\n')) != std::string_view::npos;) {
      std::string_view line = chunk.substr(0, end);
      if (!pending.empty()) {
        pending.append(line);
        line = pending;
      }
      if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      if (!line.empty()) row(line);
      pending.clear();
      chunk.remove_prefix(end + 1);
    }
    pending.append(chunk);
  }
  if (!pending.empty()) row(pending);
  if (std::ferror(in) != 0) die(std::string("cannot read ") + argv[1]);
  std::fclose(in);
  exec(db, "COMMIT");
  sqlite3_finalize(insert);
  if (sqlite3_close(db) != SQLITE_OK) die("cannot close the database");
  std::printf("%lld rows\n", static_cast<long long>(rows));
  return 0;
}
