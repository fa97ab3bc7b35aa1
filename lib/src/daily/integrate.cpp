// The figures of one day from the readings around it (definitions in daily.hpp).
#include <algorithm>
#include <array>
#include <bit>

#include "stagewell/daily.hpp"
#include "stagewell/uncertainty.hpp"

namespace stagewell::daily {
namespace {

enum class Use { used, bridged, excluded };

Use use_of(const DayReading& reading, const DayRules& rules) {
  const std::uint32_t bits = reading.flags.bits();
  if ((bits & rules.excluded.bits()) != 0) return Use::excluded;
  if ((bits & rules.bridged.bits()) != 0) return Use::bridged;
  // No discharge (out_of_range) and no say from its flags: nothing to use, nothing to join.
  return reading.discharge ? Use::used : Use::excluded;
}

// Discharge at `t` on the straight line from (a, qa) to (b, qb). REQUIRES: a < b.
double interpolate(std::int64_t a, double qa, std::int64_t b, double qb, std::int64_t t) {
  if (t == a) return qa;
  if (t == b) return qb;
  const double fraction = static_cast<double>(t - a) / static_cast<double>(b - a);
  return qa + (qb - qa) * fraction;
}

// The ends of a used reading's band (uncertainty.hpp).
double low_end(const DayReading& r) { return *band_low(r.discharge, r.band); }
double high_end(const DayReading& r) { return *band_high(r.discharge, r.band); }

// The volume (L^3) from a to b of the straight line through (a, qa) and (b, qb), over the part
// [lo, hi] of it.
double trapezoid(std::int64_t a, double qa, std::int64_t b, double qb, std::int64_t lo,
                 std::int64_t hi) {
  const double q_lo = interpolate(a, qa, b, qb, lo);
  const double q_hi = interpolate(a, qa, b, qb, hi);
  return 0.5 * (q_lo + q_hi) * (static_cast<double>(hi - lo) / 1000.0);
}

// Counts a reading timed within the day.
void count_reading(const DayReading& reading, std::array<std::int64_t, 32>& per_bit,
                   DayFigures& out) {
  ++out.readings;
  const std::uint32_t bits = reading.flags.bits();
  if (bits == 0) return;
  ++out.flagged;
  for (int bit = 0; bit < 32; ++bit) {
    if ((bits >> bit) & 1u) ++per_bit[static_cast<std::size_t>(bit)];
  }
}

void consider_extremes(const DayReading& reading, DayFigures& out) {
  const double q = *reading.discharge;
  // Strict comparisons: readings come in time order, so ties keep the earliest time.
  if (!out.min_discharge || q < *out.min_discharge) {
    out.min_discharge = q;
    out.min_time_ms = reading.time_ms;
  }
  if (!out.max_discharge || q > *out.max_discharge) {
    out.max_discharge = q;
    out.max_time_ms = reading.time_ms;
  }
}

}  // namespace

DayFigures compute_day(std::span<const DayReading> readings, Day day, const DayCalendar& calendar,
                       const DayRules& rules) {
  DayFigures out;
  out.day = day;
  out.start_ms = calendar.start_ms(day);
  out.end_ms = calendar.start_ms(day + 1);
  const std::int64_t start = out.start_ms;
  const std::int64_t end = out.end_ms;

  // Only readings within max_gap of the day can bound an interval that reaches into it.
  const auto first =
      std::lower_bound(readings.begin(), readings.end(), start - rules.max_gap_ms,
                       [](const DayReading& r, std::int64_t t) { return r.time_ms < t; });

  std::array<std::int64_t, 32> per_bit{};
  double volume = 0.0;  // m^3 or ft^3
  double volume_low = 0.0;
  double volume_high = 0.0;
  const DayReading* previous = nullptr;  // the last used reading, if no excluded one came since
  for (auto it = first; it != readings.end() && it->time_ms <= end + rules.max_gap_ms; ++it) {
    const DayReading& reading = *it;
    const bool in_day = reading.time_ms >= start && reading.time_ms < end;
    if (in_day) count_reading(reading, per_bit, out);
    const Use use = use_of(reading, rules);
    if (use == Use::excluded) {
      previous = nullptr;  // the time from the last used reading to the next one is missing
      continue;
    }
    if (use == Use::bridged) continue;
    if (in_day) consider_extremes(reading, out);

    if (previous != nullptr && reading.time_ms - previous->time_ms <= rules.max_gap_ms) {
      const std::int64_t a = previous->time_ms;
      const std::int64_t b = reading.time_ms;
      const std::int64_t lo = std::max(a, start);
      const std::int64_t hi = std::min(b, end);
      if (hi > lo) {
        volume += trapezoid(a, *previous->discharge, b, *reading.discharge, lo, hi);
        volume_low += trapezoid(a, low_end(*previous), b, low_end(reading), lo, hi);
        volume_high += trapezoid(a, high_end(*previous), b, high_end(reading), lo, hi);
        out.covered_ms += hi - lo;
      }
    }
    previous = &reading;
  }

  if (out.covered_ms > 0) {
    out.volume = volume;
    out.volume_low = volume_low;
    out.volume_high = volume_high;
    out.mean_discharge = volume / (static_cast<double>(out.covered_ms) / 1000.0);
  }
  out.coverage = static_cast<double>(out.covered_ms) / static_cast<double>(end - start);
  for (const Flag flag : all_flags()) {
    const auto bit = static_cast<std::size_t>(std::countr_zero(static_cast<std::uint32_t>(flag)));
    if (per_bit[bit] > 0) out.flag_counts.push_back({flag, per_bit[bit]});
  }
  return out;
}

std::vector<DayFigures> compute_days(std::span<const DayReading> readings,
                                     const DayCalendar& calendar, const DayRules& rules) {
  std::vector<DayFigures> days;
  if (readings.empty()) return days;
  const Day last = calendar.day_of(readings.back().time_ms);
  for (Day day = calendar.day_of(readings.front().time_ms); day <= last; ++day) {
    DayFigures figures = compute_day(readings, day, calendar, rules);
    if (!figures.empty()) days.push_back(std::move(figures));
  }
  return days;
}

}  // namespace stagewell::daily
