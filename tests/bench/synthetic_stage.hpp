// An invented stage record for the benchmarks: four gauged sites, one reading a minute each, a
// smooth seasonal and daily swing with sensor noise, from a fixed seed so every run reads the same
// bytes. Not data from anywhere: the sites, their sections and their levels are made up.
//
// The series is written as the CSV a gateway would send (site,time,stage; one line per site per
// minute, minute by minute), and the same configuration is offered as YAML text.
#pragma once

#include <fmt/format.h>

#include <array>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <random>
#include <string>
#include <string_view>

namespace stagewell::bench {

inline constexpr int kSites = 4;
inline constexpr std::int64_t kMinutesPerYear = 365 * 24 * 60;  // 525,600
// 2024-01-01T00:00:00Z in ms since the epoch: a year in the past, so `future` never fires.
inline constexpr std::int64_t kStartMs = 1'704'067'200'000;

struct SiteSeries {
  std::string_view id;
  double mean;        // stage units
  double seasonal;    // stage units: amplitude of the yearly swing
  double daily;       // stage units: amplitude of the daily swing (irrigation draw, melt)
  double noise;       // stage units: standard deviation of the sensor noise
  int decimals;       // digits the logger writes
};

// Stage units per site follow the YAML below (m, cm, m, m).
inline constexpr std::array<SiteSeries, kSites> kSeries{{
    {"raceway-a", 0.55, 0.15, 0.03, 0.002, 3},
    {"feeder-canal", 70.0, 30.0, 4.0, 0.1, 1},
    {"storm-culvert", 0.25, 0.10, 0.02, 0.003, 3},
    {"footbridge-creek", 1.10, 0.45, 0.04, 0.002, 3},  // 16 characters: beyond short-string storage
}};

// The sites of kSeries. `database` is written as given (an absolute path in the benchmarks).
inline std::string bench_config_yaml(std::string_view database) {
  return fmt::format(R"(units: metric
database: {}
sites:
  - id: raceway-a
    section: {{shape: rectangular, width: 2.4, height: 1.2}}
    roughness: 0.014
    slope: 0.0015
    stage: {{units: m, zero_flow: 0.10}}
    checks: {{min_stage: 0.0, max_stage: 1.4, spike: 0.25, max_rate: 0.5, flatline: 6h,
              max_gap: 15m}}
  - id: feeder-canal
    section: {{shape: trapezoidal, width: 1.8, side_slope: 1.5, height: 1.3}}
    roughness: 0.024
    slope: 0.0004
    stage: {{units: cm, offset: 2.0, zero_flow: 5.0}}
    checks: {{min_stage: 0, max_stage: 150, spike: 20, max_rate: 40, max_gap: 1h}}
  - id: storm-culvert
    section: {{shape: circular, diameter: 0.9}}
    roughness: 0.013
    slope: 0.005
    stage: {{units: m}}
    checks: {{min_stage: 0.0, max_stage: 1.5, spike: 0.3, max_rate: 2.0, flatline: 0, max_gap: 1h}}
  - id: footbridge-creek
    section:
      shape: surveyed
      points: [[0.0, 3.4], [4.0, 2.6], [9.0, 2.2], [11.0, 2.0], [12.0, 1.1], [13.5, 0.3],
               [15.0, 0.0], [16.5, 0.2], [17.5, 0.9], [18.5, 1.9], [24.0, 2.1], [30.0, 2.5],
               [34.0, 3.3]]
      breaks: [11.0, 18.5]
    roughness: [0.045, 0.032, 0.060]
    slope: 0.0018
    stage: {{units: m, zero_flow: 0.35}}
    checks: {{min_stage: 0.2, max_stage: 4.0, spike: 0.3, max_rate: 0.8, flatline: 12h,
              max_gap: 1h}}
)",
                     database);
}

// Produces the readings one at a time, in file order (minute by minute, the sites in kSeries
// order). The same seed gives the same readings.
class StageSeries {
 public:
  explicit StageSeries(std::uint64_t seed = 20240101) : random_(seed) {}

  struct Reading {
    int site;               // index into kSeries
    std::int64_t time_ms;   // ms since the epoch, UTC
    double stage;           // stage units, rounded as the logger writes it
  };

  // The n-th reading (n counts up from 0 on successive calls).
  Reading next() {
    const int site = static_cast<int>(count_ % kSites);
    const std::int64_t minute = count_ / kSites;
    ++count_;
    constexpr double kTwoPi = 6.283185307179586;
    const auto& s = kSeries[static_cast<std::size_t>(site)];
    const double year_phase = kTwoPi * static_cast<double>(minute) / kMinutesPerYear;
    const double day_phase = kTwoPi * static_cast<double>(minute % 1440) / 1440.0;
    const double value = s.mean + s.seasonal * std::sin(year_phase + site) +
                         s.daily * std::sin(day_phase) + s.noise * noise_(random_);
    const double scale = std::pow(10.0, s.decimals);
    return {site, kStartMs + minute * 60'000, std::round(value * scale) / scale};
  }

 private:
  std::mt19937_64 random_;
  std::normal_distribution<double> noise_{0.0, 1.0};
  std::int64_t count_ = 0;
};

// "2024-01-01T00:01:00Z"
inline void append_time_utc(std::string& out, std::int64_t time_ms) {
  using namespace std::chrono;
  const sys_time<milliseconds> instant{milliseconds(time_ms)};
  const auto day = floor<days>(instant);
  const year_month_day date{day};
  const hh_mm_ss time{floor<seconds>(instant - day)};
  fmt::format_to(std::back_inserter(out), "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}Z",
                 static_cast<int>(date.year()), static_cast<unsigned>(date.month()),
                 static_cast<unsigned>(date.day()), time.hours().count(), time.minutes().count(),
                 time.seconds().count());
}

// One CSV line with its '\n': "raceway-a,2024-01-01T00:01:00Z,0.553\n".
inline void append_csv_line(std::string& out, const StageSeries::Reading& reading) {
  const auto& s = kSeries[static_cast<std::size_t>(reading.site)];
  out.append(s.id);
  out.push_back(',');
  append_time_utc(out, reading.time_ms);
  fmt::format_to(std::back_inserter(out), ",{:.{}f}\n", reading.stage, s.decimals);
}

inline constexpr std::string_view kCsvHeader = "site,time,stage\n";

}  // namespace stagewell::bench
