// Per-reading cost of the hydraulics core: a rating-table look-up (the ingest path; target
// <= 50 ns) and the direct formula for a 100-point surveyed section (what the table saves).
// Depths are scattered over the section so that neither branch prediction nor the cache sees
// one depth over and over.
#include <benchmark/benchmark.h>

#include <cmath>
#include <memory>
#include <random>
#include <vector>

#include "stagewell/rating.hpp"

namespace {

using namespace stagewell;

std::shared_ptr<const Channel> make_channel(const SectionSpec& spec,
                                            std::vector<double> roughness) {
  auto section = make_section(spec);
  if (!section) std::abort();
  return std::make_shared<Channel>(std::shared_ptr<const Section>(std::move(*section)),
                                   std::move(roughness), 0.001, units::System::metric);
}

// An invented natural channel: 100 surveyed points, a main channel and two overbanks.
SectionSpec surveyed_100_points() {
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  std::mt19937 random(7);
  std::uniform_real_distribution<double> jitter(0.0, 0.3);
  for (int i = 0; i < 100; ++i) {
    const double station = 0.5 * i;                                 // m
    const double u = (station - 25.0) / 25.0;                       // -1 .. 1 across the section
    const double elevation = 100.0 + 4.0 * u * u + jitter(random);  // m
    spec.points.emplace_back(station, elevation);
  }
  spec.points.front().second = 105.0;
  spec.points.back().second = 105.5;
  spec.breaks = {15.0, 35.0};
  return spec;
}

SectionSpec trapezoid() {
  SectionSpec spec;
  spec.shape = Shape::trapezoidal;
  spec.width = 3.0;
  spec.side_slope_left = 2.0;
  spec.side_slope_right = 2.0;
  spec.height = 2.0;
  return spec;
}

std::vector<double> scattered_depths(double top) {
  std::mt19937 random(11);
  std::uniform_real_distribution<double> fraction(0.001, 1.0);
  std::vector<double> depths(4096);
  for (double& depth : depths) depth = top * fraction(random);
  return depths;
}

void run_table(benchmark::State& state, const std::shared_ptr<const Channel>& channel) {
  const RatingTable table(channel);
  const std::vector<double> depths = scattered_depths(table.valid_depth());
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(table.discharge(depths[i]));
    i = (i + 1) & (depths.size() - 1);
  }
  state.counters["knots"] = static_cast<double>(table.knot_count());
}

void run_direct(benchmark::State& state, const std::shared_ptr<const Channel>& channel) {
  const std::vector<double> depths = scattered_depths(channel->section().top_depth());
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(channel->discharge(depths[i]));
    i = (i + 1) & (depths.size() - 1);
  }
}

void BM_RatingTableSurveyed(benchmark::State& state) {
  run_table(state, make_channel(surveyed_100_points(), {0.045, 0.032, 0.050}));
}
void BM_RatingTableTrapezoidal(benchmark::State& state) {
  run_table(state, make_channel(trapezoid(), {0.015}));
}
void BM_DirectSurveyed100Points(benchmark::State& state) {
  run_direct(state, make_channel(surveyed_100_points(), {0.045, 0.032, 0.050}));
}
void BM_DirectTrapezoidal(benchmark::State& state) {
  run_direct(state, make_channel(trapezoid(), {0.015}));
}
void BM_BuildRatingTableSurveyed(benchmark::State& state) {
  const auto channel = make_channel(surveyed_100_points(), {0.045, 0.032, 0.050});
  for (auto _ : state) benchmark::DoNotOptimize(RatingTable(channel).knot_count());
}
void BM_NormalDepthSurveyed(benchmark::State& state) {
  const auto channel = make_channel(surveyed_100_points(), {0.045, 0.032, 0.050});
  const double top_discharge = channel->discharge(channel->section().top_depth());
  double fraction = 0.1;
  for (auto _ : state) {
    benchmark::DoNotOptimize(channel->normal_depth(fraction * top_discharge));
    fraction = fraction > 0.9 ? 0.1 : fraction + 0.01;
  }
}

}  // namespace

BENCHMARK(BM_RatingTableSurveyed);
BENCHMARK(BM_RatingTableTrapezoidal);
BENCHMARK(BM_DirectSurveyed100Points);
BENCHMARK(BM_DirectTrapezoidal);
BENCHMARK(BM_BuildRatingTableSurveyed)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_NormalDepthSurveyed)->Unit(benchmark::kMicrosecond);

BENCHMARK_MAIN();
