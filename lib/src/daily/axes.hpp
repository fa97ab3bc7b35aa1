// Tick marks for the plots: "nice" numbers (1, 2 or 5 times a power of ten) on linear and
// logarithmic axes, and times on whole local minutes, hours, days, months or years.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stagewell/timestamp.hpp"

namespace stagewell::plot_detail {

struct Tick {
  double value = 0.0;
  std::string label;
};

struct LinearAxis {
  double low = 0.0;
  double high = 1.0;
  std::vector<Tick> ticks;
};

// An axis covering [low, high] (widened to a tick at both ends), with about `target` ticks.
// `include_zero` extends it down (or up) to 0.
LinearAxis linear_axis(double low, double high, int target, bool include_zero);

struct LogAxis {
  double low = 1.0;  // 1, 2 or 5 times a power of ten, at or below the data
  double high = 10.0;  // the same, at or above
  std::vector<Tick> ticks;
};

// REQUIRES: 0 < low <= high.
LogAxis log_axis(double low, double high);

struct TimeTick {
  std::int64_t time_ms = 0;
  std::string label;   // "06:00", "2026-03-08", "2026-03"
  std::string detail;  // a second line: the date under the first time of each day, else empty
};

// Ticks on whole local units of `zone` within [from_ms, to_ms], at most about `target`.
std::vector<TimeTick> time_ticks(std::int64_t from_ms, std::int64_t to_ms, const TimeZone& zone,
                                 int target);

}  // namespace stagewell::plot_detail
