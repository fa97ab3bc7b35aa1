// Recomputation after an edit of a site's history: one site-year of one-minute readings (525,600,
// UTC) stored once; each iteration moves a change of roughness (from 15 January) between two
// values and recomputes the 505,440 readings after it and their daily figures with the
// Recomputation, in the daemon's steps of 2000 readings.
//
//   build/tests/bench/recompute_bench
//
// Target: <= 10 s per site-year on the 2-core machine (the daemon's live ingest shares the loop
// between steps). Never run by ctest.
#include <benchmark/benchmark.h>
#include <fmt/format.h>
#include <stdlib.h>

#include <cmath>
#include <filesystem>

#include "stagewell/ingestor.hpp"
#include "stagewell/recomputation.hpp"

namespace {

using namespace stagewell;

constexpr std::int64_t kMinuteMs = 60'000;
constexpr std::int64_t kYearStartMs = 1735689600000;  // 2025-01-01T00:00:00Z
constexpr std::int64_t kReadings = 365 * 1440;
constexpr std::int64_t kStepReadings = 2000;

std::string config_text(const std::filesystem::path& db, double roughness_after) {
  return fmt::format(R"(units: metric
database: {}
sites:
  - id: canal
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.015
    slope: 0.001
    changes:
      - from: 2025-01-15T00:00:00Z
        roughness: {}
)",
                     db.string(), roughness_after);
}

Config must_parse(const std::string& text) {
  auto config = parse_config(text, "bench.yaml", "/");
  if (!config) std::abort();
  return *config;
}

void BM_RecomputeSiteYear(benchmark::State& state) {
  std::string pattern =
      (std::filesystem::temp_directory_path() / "recompute-bench-XXXXXX").string();
  if (::mkdtemp(pattern.data()) == nullptr) std::abort();
  const std::filesystem::path dir(pattern);
  const auto db = dir / "flows.db";
  {
    const Config config = must_parse(config_text(db, 0.020));
    auto ingestor = Ingestor::open(config, IngestorOptions{}, [] { return kYearStartMs * 2; });
    if (!ingestor) std::abort();
    for (std::int64_t i = 0; i < kReadings; ++i) {
      // Invented stage, m: 0.5 m with a daily swing of 0.2 m.
      const double stage = 0.5 + 0.2 * std::sin(2 * M_PI * static_cast<double>(i) / 1440.0);
      const Record record{"canal", kYearStartMs + i * kMinuteMs, stage, i + 1};
      if (!(*ingestor)->reading(record, {"bench", i + 1, ""})) std::abort();
      if ((*ingestor)->commit_due() && !(*ingestor)->commit()) std::abort();
    }
    if (!(*ingestor)->commit()) std::abort();
  }
  auto store = Store::open(db);
  if (!store) std::abort();
  bool toggle = false;
  std::int64_t recomputed = 0;
  for (auto _ : state) {
    toggle = !toggle;
    const Config config = must_parse(config_text(db, toggle ? 0.030 : 0.020));
    auto work = Recomputation::plan(*store, config, "canal", kYearStartMs * 2);
    if (!work) std::abort();
    while (!(*work)->done()) {
      if (!(*work)->step(*store, kStepReadings)) std::abort();
    }
    recomputed += (*work)->totals().readings_recomputed;
  }
  state.counters["readings/s"] =
      benchmark::Counter(static_cast<double>(recomputed), benchmark::Counter::kIsRate);
  std::filesystem::remove_all(dir);
}
BENCHMARK(BM_RecomputeSiteYear)->Unit(benchmark::kSecond)->Iterations(3)->UseRealTime();

}  // namespace

BENCHMARK_MAIN();
