// Daily figures: recomputing a site's whole daily table from its readings.
//
//   build/tests/bench/daily_bench [--benchmark_repetitions=5]
//
// One site-year of one-minute readings (525,600; America/Denver, so the year has its 23- and
// 25-hour days), with a spike and an out-of-range reading every few hours, stored through the
// store in a fresh database. Measured:
//   BM_FullRecompute  recompute_site in one transaction: read every reading, compute all 365 days,
//                     replace the stored figures, commit. Target: <= 0.2 s.
//   BM_ComputeOnly    compute_days on readings already in memory: the arithmetic alone.
//   BM_Ingest/keep_daily:0|1
//                     what keeping the figures current adds to ingest: tests/bench/ingest_bench's
//                     invented four sites (synthetic_stage.hpp), 30 days of one-minute readings
//                     (172,800 lines) through FileReader and Ingestor with default options, into a
//                     fresh database each time, with the daily figures kept current or not. Run
//                     with --benchmark_repetitions=5 --benchmark_enable_random_interleaving=true
//                     and compare the CPU times: the target is <= 10 % more with them.
// ingest_bench prints the same comparison for its year of readings ("daily figures off").
// Never run by ctest.
#include <benchmark/benchmark.h>
#include <fmt/format.h>
#include <stdlib.h>

#include <cmath>
#include <filesystem>
#include <limits>

#include "stagewell/daily.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"
#include "synthetic_stage.hpp"

namespace {

using namespace stagewell;
using namespace stagewell::daily;

constexpr std::int64_t kMinuteMs = 60'000;
constexpr std::int64_t kYearStartMs = 1767250800000;  // 2026-01-01T00:00 in Denver (07:00Z)
constexpr std::int64_t kReadings = 365 * 24 * 60;

struct Fixture {
  std::filesystem::path dir;
  std::optional<Store> store;
  SiteKey site;
  DayCalendar calendar{*TimeZone::parse("America/Denver")};
  DayRules rules;

  Fixture() {
    std::string pattern = (std::filesystem::temp_directory_path() / "stagewell-daily-XXXXXX");
    if (::mkdtemp(pattern.data()) == nullptr) std::abort();
    dir = pattern;
    auto opened = Store::open(dir / "bench.db");
    if (!opened) std::abort();
    store.emplace(std::move(*opened));
    site = *store->sites().ensure("bench");
    const auto config = *store->versions().record(site, "{}", 0);
    rules.max_gap_ms = 15 * kMinuteMs;
    for (std::int64_t first = 0; first < kReadings; first += 50'000) {
      auto batch = store->begin();
      for (std::int64_t i = first; i < std::min(kReadings, first + 50'000); ++i) {
        StoredReading r;
        r.site = site;
        r.time_ms = kYearStartMs + i * kMinuteMs;
        r.stage = 0.5;
        r.depth = 0.4;
        r.discharge = 1.0 + 0.5 * std::sin(static_cast<double>(i) / 700.0);
        r.config = config;
        if (i % 500 == 250) r.flags = Flag::spike;
        if (i % 700 == 350) {
          r.flags = Flag::out_of_range;
          r.discharge.reset();
        }
        if (!batch->insert(r)) std::abort();
      }
      if (!batch->commit()) std::abort();
    }
  }
  ~Fixture() {
    store.reset();
    std::error_code ignored;
    std::filesystem::remove_all(dir, ignored);
  }
};

Fixture& fixture() {
  static Fixture f;
  return f;
}

void BM_FullRecompute(benchmark::State& state) {
  Fixture& f = fixture();
  for (auto _ : state) {
    auto batch = f.store->begin();
    if (!batch) state.SkipWithError(batch.error().message.c_str());
    auto done = recompute_site(*f.store, *batch, f.site, f.calendar, f.rules, "bench");
    if (!done) state.SkipWithError(done.error().message.c_str());
    if (!batch->commit()) state.SkipWithError("commit failed");
  }
  auto days = f.store->daily().days(f.site, Day(2025, 1, 1), Day(2027, 12, 31));
  state.counters["days"] = static_cast<double>(days ? days->size() : 0);
  state.counters["readings"] = static_cast<double>(kReadings);
}
BENCHMARK(BM_FullRecompute)->Unit(benchmark::kMillisecond)->MinTime(2.0);

void BM_ComputeOnly(benchmark::State& state) {
  Fixture& f = fixture();
  auto readings = f.store->readings().day_readings(f.site, std::numeric_limits<std::int64_t>::min(),
                                                   std::numeric_limits<std::int64_t>::max());
  if (!readings) {
    state.SkipWithError(readings.error().message.c_str());
    return;
  }
  for (auto _ : state) {
    auto days = compute_days(*readings, f.calendar, f.rules);
    benchmark::DoNotOptimize(days);
  }
}
BENCHMARK(BM_ComputeOnly)->Unit(benchmark::kMillisecond);

// A CSV file of the synthetic series, written once.
struct IngestFixture {
  std::filesystem::path dir;
  std::filesystem::path csv;
  static constexpr std::int64_t kLines = bench::kSites * 30 * 24 * 60;

  IngestFixture() {
    std::string pattern = (std::filesystem::temp_directory_path() / "stagewell-daily-XXXXXX");
    if (::mkdtemp(pattern.data()) == nullptr) std::abort();
    dir = pattern;
    csv = dir / "series.csv";
    std::string text(bench::kCsvHeader);
    bench::StageSeries series;
    for (std::int64_t i = 0; i < kLines; ++i) bench::append_csv_line(text, series.next());
    std::FILE* file = std::fopen(csv.c_str(), "wb");
    if (file == nullptr || std::fwrite(text.data(), 1, text.size(), file) != text.size()) {
      std::abort();
    }
    std::fclose(file);
  }
  ~IngestFixture() {
    std::error_code ignored;
    std::filesystem::remove_all(dir, ignored);
  }
};

void BM_Ingest(benchmark::State& state) {
  static IngestFixture f;
  IngestorOptions options;
  options.keep_daily = state.range(0) != 0;
  int run = 0;
  for (auto _ : state) {
    state.PauseTiming();
    const auto database = f.dir / fmt::format("ingest-{}-{}.db", state.range(0), run++);
    auto config = parse_config(bench::bench_config_yaml(database.string()), "bench.yaml", f.dir);
    if (!config) std::abort();
    state.ResumeTiming();
    auto ingestor = Ingestor::open(*config, options, system_now_ms);
    if (!ingestor) std::abort();
    auto reader = FileReader::open(f.csv, SourceSpec{}, "ingest:" + f.csv.string(), **ingestor);
    if (!reader) std::abort();
    for (;;) {
      auto finished = (*reader)->step(kReadChunkBytes * 4);
      if (!finished) std::abort();
      if ((*ingestor)->commit_due() || *finished) {
        if (!(*ingestor)->commit()) std::abort();
      }
      if (*finished) break;
    }
    if ((*ingestor)->counts().stored != IngestFixture::kLines) std::abort();
    state.PauseTiming();
    ingestor->reset();
    for (const char* suffix : {"", "-wal", "-shm"}) {
      std::filesystem::remove(database.string() + suffix);
    }
    state.ResumeTiming();
  }
  state.counters["readings/s"] = benchmark::Counter(
      static_cast<double>(IngestFixture::kLines) * static_cast<double>(state.iterations()),
      benchmark::Counter::kIsRate);
}
BENCHMARK(BM_Ingest)->ArgName("keep_daily")->Arg(0)->Arg(1)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
