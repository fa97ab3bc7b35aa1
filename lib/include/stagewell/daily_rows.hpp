// The rows of the daily tables and of the readings as the daily figures need them (schema/
// 002_daily.sql), as the store hands them to the daily module and takes them back. What the
// figures mean is in daily.hpp; the store only keeps them.
#pragma once

#include <cctz/civil_time.h>

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/flags.hpp"

namespace stagewell::daily {

using Day = cctz::civil_day;

// 'YYYY-MM-DD'.
std::string format_day(Day day);
// Parses 'YYYY-MM-DD' (a real date); nullopt otherwise.
std::optional<Day> parse_day(std::string_view text);

// A stored reading as the figures need it.
struct DayReading {
  std::int64_t time_ms = 0;
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
  std::optional<double> band = std::nullopt;  // relative expanded uncertainty; empty: none known
};

struct FlagCount {
  Flag flag = Flag::gap;
  std::int64_t readings = 0;
  friend bool operator==(const FlagCount&, const FlagCount&) = default;
};

struct DayFigures {
  Day day;
  std::int64_t start_ms = 0;
  std::int64_t end_ms = 0;
  std::optional<double> volume;      // m^3 or ft^3
  std::optional<double> volume_low;  // from the low and high ends of each reading's band
  std::optional<double> volume_high;
  std::optional<double> mean_discharge;  // m^3/s or ft^3/s
  std::optional<double> min_discharge;
  std::optional<std::int64_t> min_time_ms;
  std::optional<double> max_discharge;
  std::optional<std::int64_t> max_time_ms;
  std::int64_t covered_ms = 0;
  double coverage = 0.0;  // covered_ms / (end_ms - start_ms)
  std::int64_t readings = 0;
  std::int64_t flagged = 0;
  std::vector<FlagCount> flag_counts;  // in flag order; only flags that occur

  std::int64_t length_ms() const { return end_ms - start_ms; }
  bool complete() const { return covered_ms == end_ms - start_ms; }
  bool empty() const { return readings == 0 && covered_ms == 0; }  // such a day has no row
  friend bool operator==(const DayFigures&, const DayFigures&) = default;
};

}  // namespace stagewell::daily
