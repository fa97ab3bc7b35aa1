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
// What keeping the figures current adds to ingest is measured by tests/bench/ingest_bench
// ("daily figures off" against the default). Never run by ctest.
#include <benchmark/benchmark.h>
#include <fmt/format.h>
#include <stdlib.h>

#include <cmath>
#include <filesystem>
#include <limits>

#include "stagewell/daily.hpp"
#include "stagewell/store.hpp"

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
    site = *store->ensure_site("bench");
    const auto config = *store->record_config(site, "{}", 0);
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
    auto done = recompute_site(batch->connection(), f.site, f.calendar, f.rules, "bench");
    if (!done) state.SkipWithError(done.error().message.c_str());
    if (!batch->commit()) state.SkipWithError("commit failed");
  }
  auto days = read_days(f.store->connection(), f.site, Day(2025, 1, 1), Day(2027, 12, 31));
  state.counters["days"] = static_cast<double>(days ? days->size() : 0);
  state.counters["readings"] = static_cast<double>(kReadings);
}
BENCHMARK(BM_FullRecompute)->Unit(benchmark::kMillisecond)->MinTime(2.0);

void BM_ComputeOnly(benchmark::State& state) {
  Fixture& f = fixture();
  auto readings =
      read_readings(f.store->connection(), f.site, std::numeric_limits<std::int64_t>::min(),
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

}  // namespace

BENCHMARK_MAIN();
