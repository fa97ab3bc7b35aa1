// Totals by month, calendar year and water year, with each period's 7-day minimum and peak
// (definitions in statistics.hpp).
#include <fmt/format.h>

#include <algorithm>

#include "stagewell/statistics.hpp"

namespace stagewell::stats {
namespace {

constexpr int kLowFlowDays = 7;

// A period as a range of days, and its name.
struct Period {
  Day first;
  Day last;
  std::string label;
};

Period period_of(Day day, PeriodKind kind, int start_month) {
  switch (kind) {
    case PeriodKind::month: {
      const cctz::civil_month month(day);
      return {Day(month), Day(month + 1) - 1,
              fmt::format("{:04d}-{:02d}", month.year(), month.month())};
    }
    case PeriodKind::calendar_year: {
      const cctz::civil_year year(day);
      return {Day(year), Day(year + 1) - 1, fmt::format("{:04d}", year.year())};
    }
    case PeriodKind::water_year: {
      // Named by the year it ends in: with an October start, 2025-10-01 is in WY2026.
      const auto ends_in = day.year() + (start_month > 1 && day.month() >= start_month ? 1 : 0);
      const Day first = start_month > 1 ? Day(ends_in - 1, start_month, 1) : Day(ends_in, 1, 1);
      const Day next = start_month > 1 ? Day(ends_in, start_month, 1) : Day(ends_in + 1, 1, 1);
      return {first, next - 1, fmt::format("WY{:04d}", ends_in)};
    }
  }
  return {day, day, ""};
}

// The lowest mean of 7 consecutive complete days among `days` (in day order, one period).
void find_low_flow(std::span<const DayFigures> days, PeriodTotal& out) {
  std::size_t run_start = 0;  // first day of the current run of consecutive complete days
  for (std::size_t i = 0; i < days.size(); ++i) {
    const bool usable = days[i].complete() && days[i].mean_discharge.has_value();
    const bool follows = i > 0 && days[i].day == days[i - 1].day + 1;
    if (!usable) {
      run_start = i + 1;
      continue;
    }
    if (!follows) run_start = i;
    if (i + 1 - run_start < static_cast<std::size_t>(kLowFlowDays)) continue;
    double sum = 0.0;  // summed afresh for each window: exact order, no drift
    for (std::size_t k = i + 1 - kLowFlowDays; k <= i; ++k) sum += *days[k].mean_discharge;
    const double mean = sum / kLowFlowDays;
    if (!out.min_7day_mean || mean < *out.min_7day_mean) {
      out.min_7day_mean = mean;
      out.min_7day_first = days[i + 1 - kLowFlowDays].day;
    }
  }
}

// `period` is the part within the range; `whole` the period itself, whose length coverage is of.
PeriodTotal total_of(std::span<const DayFigures> days, const Period& period, const Period& whole,
                     const daily::DayCalendar& calendar) {
  PeriodTotal out;
  out.label = period.label;
  out.first = period.first;
  out.last = period.last;
  out.length_ms = calendar.start_ms(whole.last + 1) - calendar.start_ms(whole.first);
  for (const DayFigures& day : days) {
    ++out.days_with_figures;
    out.volume += day.volume.value_or(0.0);
    out.covered_ms += day.covered_ms;
    if (day.max_discharge && (!out.peak_discharge || *day.max_discharge > *out.peak_discharge)) {
      out.peak_discharge = day.max_discharge;
      out.peak_time_ms = day.max_time_ms;
    }
  }
  if (out.covered_ms > 0) {
    out.mean_discharge = out.volume / (static_cast<double>(out.covered_ms) / 1000.0);
  }
  find_low_flow(days, out);
  return out;
}

}  // namespace

std::vector<PeriodTotal> totals(std::span<const DayFigures> days, Day from, Day to, PeriodKind kind,
                                int water_year_start_month, const daily::DayCalendar& calendar) {
  std::vector<PeriodTotal> out;
  auto next = std::lower_bound(days.begin(), days.end(), from,
                               [](const DayFigures& d, Day day) { return d.day < day; });
  for (Day day = from; day <= to;) {
    const Period whole = period_of(day, kind, water_year_start_month);
    Period period = whole;
    period.first = std::max(period.first, from);  // only the part within the range
    period.last = std::min(period.last, to);
    const auto begin = next;
    while (next != days.end() && next->day <= period.last) ++next;
    out.push_back(total_of(std::span<const DayFigures>(begin, next), period, whole, calendar));
    day = period.last + 1;
  }
  return out;
}

}  // namespace stagewell::stats
