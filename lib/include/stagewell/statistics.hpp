// Statistics from the daily figures (daily.hpp): totals by month, calendar year and water year,
// the flow-duration curve, the annual minimum 7-day mean and the annual peak.
//
// Definitions (docs/daily-and-statistics.md, "`stagewell stats`", copies these):
//   complete day   a day whose coverage is 1 (no missing time).
//   totals         per period (month, calendar year, water year), over the period's days that lie
//                  in the range asked for: volume = the sum of the days' volumes; mean discharge
//                  = volume / covered time; coverage = covered time / length of the whole period
//                  (never of the range: a month with one day of data is 1/30 covered however the
//                  range cuts it). Days without figures count as missing time.
//   water year     starts on the first day of DailySpec::water_year_start_month and is named by
//                  the calendar year it ends in (start October: WY2026 = 2025-10-01..2026-09-30).
//   flow duration  the mean discharges of the complete days in the range; every other day of
//                  the range, with figures or none, is counted as left out. Exceedance by the
//                  Weibull plotting position p = m / (n + 1), m the rank from the largest (1) to
//                  the smallest (n); equal flows share the mean of their ranks, so every day of a
//                  tie has the same p (Vogel and Fennessey, "Flow-duration curves I", ASCE J. Water
//                  Resour. Plann. Manage. 120(4), 1994).
//   Q(p)           the flow exceeded a share p of the time: the flows sorted from the largest,
//                  the i-th at p_i = i / (n + 1), linearly interpolated in p between neighbours.
//                  Not given (empty) when p < 1/(n+1) or p > n/(n+1): the record is too short to
//                  tell. (Equal to Hyndman and Fan's sample quantile type 6 at 1 - p.)
//   7-day minimum  per year, the lowest mean of the daily means of 7 consecutive complete days,
//                  all within that year; empty when the year has no such 7 days.
//   peak           per period, the highest used reading (the days' maximum discharge) and its time.
//
// Flows are in m^3/s or ft^3/s and volumes in m^3 or ft^3, as stored; Conversion turns them into
// any unit of units.hpp.
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "stagewell/daily.hpp"
#include "stagewell/units.hpp"

namespace stagewell::stats {

using daily::Day;
using daily::DayFigures;

// Exceedance probability of each flow (Weibull, ties at their mean rank); missing stays missing.
std::vector<std::optional<double>> exceedance_probabilities(
    std::span<const std::optional<double>> flows);

// Q(p) of `flows` (any order), p from 0 to 1.
std::optional<double> flow_exceeded(std::span<const double> flows, double p);

// The exceedance percentages reported: 5, 10, 25, 50, 75, 90, 95.
inline constexpr std::array<double, 7> kReportedPercents = {5, 10, 25, 50, 75, 90, 95};

struct DurationPoint {
  Day day;
  double mean_discharge = 0.0;
  double exceedance = 0.0;  // 0 to 1
};

struct FlowDuration {
  std::vector<DurationPoint> curve;  // from the largest flow to the smallest
  std::int64_t days_left_out = 0;    // days of the range not complete (or without figures)
  std::array<std::optional<double>, kReportedPercents.size()> exceeded;  // Q at each percent
};

// The complete days of `days` within [from, to]. REQUIRES: `days` in day order; from <= to.
FlowDuration flow_duration(std::span<const DayFigures> days, Day from, Day to);

enum class PeriodKind { month, calendar_year, water_year };

struct PeriodTotal {
  std::string label;  // "2026-03", "2026", "WY2026"
  Day first;          // the period's first and last day within the range
  Day last;
  double volume = 0.0;  // m^3 or ft^3
  std::int64_t covered_ms = 0;
  std::int64_t length_ms = 0;  // of the whole period, also where the range cuts it
  std::int64_t days_with_figures = 0;
  std::optional<double> mean_discharge;  // volume / covered time
  std::optional<double> min_7day_mean;   // lowest 7-day mean of complete days
  std::optional<Day> min_7day_first;     // the first of those 7 days
  std::optional<double> peak_discharge;
  std::optional<std::int64_t> peak_time_ms;

  double coverage() const {
    return length_ms > 0 ? static_cast<double>(covered_ms) / static_cast<double>(length_ms) : 0.0;
  }
};

// One entry per period that overlaps [from, to], in order. `water_year_start_month` is used for
// PeriodKind::water_year only. REQUIRES: `days` in day order; from <= to.
std::vector<PeriodTotal> totals(std::span<const DayFigures> days, Day from, Day to, PeriodKind kind,
                                int water_year_start_month, const daily::DayCalendar& calendar);

// Stored flows and volumes (the configuration's unit system) into the units a person asked for.
struct Conversion {
  units::Flow flow = units::Flow::m3_per_s;
  units::Volume volume = units::Volume::m3;
  double flow_factor = 1.0;    // shown = stored * flow_factor
  double volume_factor = 1.0;  // shown = stored * volume_factor

  // Defaults: the system's own units (m^3/s and m^3, or ft^3/s and ft^3).
  static Conversion make(units::System system, std::optional<units::Flow> flow = std::nullopt,
                         std::optional<units::Volume> volume = std::nullopt);
  std::optional<double> flow_of(std::optional<double> stored) const;
  std::optional<double> volume_of(std::optional<double> stored) const;
};

}  // namespace stagewell::stats
