#include "daily/axes.hpp"

#include <cctz/civil_time.h>
#include <cctz/time_zone.h>
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>

namespace stagewell::plot_detail {
namespace {

// 1, 2 or 5 times a power of ten, at least `raw`.
double nice_step(double raw) {
  const double decade = std::pow(10.0, std::floor(std::log10(raw)));
  for (const double multiple : {1.0, 2.0, 5.0, 10.0}) {
    if (multiple * decade >= raw * (1 - 1e-12)) return multiple * decade;
  }
  return 10.0 * decade;
}

// Enough decimals to tell ticks `step` apart.
std::string tick_label(double value, double step) {
  const int decimals = std::max(0, static_cast<int>(-std::floor(std::log10(step) + 1e-9)));
  if (std::abs(value) < step * 1e-9) value = 0.0;  // no "-0.00"
  return fmt::format("{:.{}f}", value, decimals);
}

std::int64_t instant_ms(cctz::civil_second when, const cctz::time_zone& zone) {
  const auto found = zone.lookup(when);
  const auto at = found.kind == cctz::time_zone::civil_lookup::SKIPPED ? found.trans : found.pre;
  return static_cast<std::int64_t>(at.time_since_epoch().count()) * 1000;
}

cctz::civil_second to_civil(std::int64_t time_ms, const cctz::time_zone& zone) {
  const std::int64_t seconds = time_ms >= 0 ? time_ms / 1000 : -((-time_ms + 999) / 1000);
  return cctz::convert(cctz::time_point<cctz::seconds>(cctz::seconds(seconds)), zone);
}

enum class Unit { second, day, month, year };
struct Step {
  Unit unit;
  int count;
  double approx_s;
};

constexpr double kDay = 86400.0;
constexpr std::array<Step, 22> kSteps = {{
    {Unit::second, 60, 60},         {Unit::second, 300, 300},      {Unit::second, 600, 600},
    {Unit::second, 900, 900},       {Unit::second, 1800, 1800},    {Unit::second, 3600, 3600},
    {Unit::second, 7200, 7200},     {Unit::second, 10800, 10800},  {Unit::second, 21600, 21600},
    {Unit::second, 43200, 43200},   {Unit::day, 1, kDay},          {Unit::day, 2, 2 * kDay},
    {Unit::day, 7, 7 * kDay},       {Unit::day, 14, 14 * kDay},    {Unit::month, 1, 30.44 * kDay},
    {Unit::month, 2, 60.9 * kDay},  {Unit::month, 3, 91.3 * kDay}, {Unit::month, 6, 182.6 * kDay},
    {Unit::year, 1, 365.25 * kDay}, {Unit::year, 2, 730.5 * kDay}, {Unit::year, 5, 1826 * kDay},
    {Unit::year, 10, 3652 * kDay},
}};

}  // namespace

LinearAxis linear_axis(double low, double high, int target, bool include_zero) {
  if (include_zero) {
    low = std::min(low, 0.0);
    high = std::max(high, 0.0);
  }
  if (!(high > low)) {  // one value (or none): a unit-wide axis around it
    const double half = low == 0.0 ? 1.0 : std::abs(low) * 0.5;
    low -= include_zero && low == 0.0 ? 0.0 : half;
    high += half;
  }
  const double step = nice_step((high - low) / std::max(target, 1));
  LinearAxis axis;
  axis.low = std::floor(low / step + 1e-9) * step;
  axis.high = std::ceil(high / step - 1e-9) * step;
  for (double v = axis.low; v <= axis.high + step * 1e-6; v += step) {
    axis.ticks.push_back({v, tick_label(v, step)});
  }
  return axis;
}

LogAxis log_axis(double low, double high) {
  // Bounds at 1, 2 or 5 times a power of ten around the data (not whole decades, which would
  // flatten a narrow curve); ticks at every such value inside, and at 3, 4, 6, 7, 8 and 9 too when
  // the axis spans less than one decade.
  const auto candidates = [](double e) {
    const double p = std::pow(10.0, e);
    return std::array<double, 3>{p, 2 * p, 5 * p};
  };
  LogAxis axis;
  axis.low = 0.0;
  axis.high = 0.0;
  for (double e = std::floor(std::log10(low)) - 1; e <= std::ceil(std::log10(high)) + 1; e += 1) {
    for (const double v : candidates(e)) {
      if (v <= low * (1 + 1e-12)) axis.low = v;
      if (axis.high == 0.0 && v >= high * (1 - 1e-12) && v > axis.low) axis.high = v;
    }
  }
  const bool fine = axis.high / axis.low < 10.0 * (1 + 1e-12);
  for (double e = std::floor(std::log10(axis.low)) - 1; e <= std::ceil(std::log10(axis.high));
       e += 1) {
    const double step = std::pow(10.0, e);
    for (int m = 1; m <= 9; ++m) {
      if (!fine && m != 1 && m != 2 && m != 5) continue;
      const double value = m * step;
      if (value < axis.low * (1 - 1e-9) || value > axis.high * (1 + 1e-9)) continue;
      axis.ticks.push_back({value, tick_label(value, step)});
    }
  }
  return axis;
}

std::vector<TimeTick> time_ticks(std::int64_t from_ms, std::int64_t to_ms, const TimeZone& zone,
                                 int target) {
  const auto& tz = zone.cctz_zone();
  const double span_s = static_cast<double>(to_ms - from_ms) / 1000.0;
  Step step = kSteps.back();
  for (const Step& candidate : kSteps) {
    if (span_s / candidate.approx_s <= target) {
      step = candidate;
      break;
    }
  }
  // The first whole unit at or before `from`, in local time.
  const cctz::civil_second first = to_civil(from_ms, tz);
  cctz::civil_second at;
  switch (step.unit) {
    case Unit::second: {
      const cctz::civil_day day(first);
      const auto into_day = first - cctz::civil_second(day);
      at = cctz::civil_second(day) + (into_day / step.count) * step.count;
      break;
    }
    case Unit::day:
      at = cctz::civil_second(cctz::civil_day(first));
      break;
    case Unit::month: {
      const cctz::civil_month month(first);
      at = cctz::civil_second(
          cctz::civil_month(month.year(), ((month.month() - 1) / step.count) * step.count + 1));
      break;
    }
    case Unit::year: {
      const auto year = cctz::civil_year(first).year();
      at = cctz::civil_second(
          cctz::civil_year(year - ((year % step.count) + step.count) % step.count));
      break;
    }
  }

  std::vector<TimeTick> ticks;
  cctz::civil_day last_labelled_day(-1000000);
  for (int guard = 0; guard < 10000; ++guard) {
    const std::int64_t ms = instant_ms(at, tz);
    if (ms > to_ms) break;
    if (ms >= from_ms && (ticks.empty() || ms > ticks.back().time_ms)) {
      TimeTick tick;
      tick.time_ms = ms;
      const cctz::civil_second shown = to_civil(ms, tz);  // the clock reading at that instant
      const cctz::civil_day day(shown);
      switch (step.unit) {
        case Unit::second:
          tick.label = fmt::format("{:02d}:{:02d}", shown.hour(), shown.minute());
          if (day != last_labelled_day) {
            tick.detail = fmt::format("{:04d}-{:02d}-{:02d}", day.year(), day.month(), day.day());
            last_labelled_day = day;
          }
          break;
        case Unit::day:
          tick.label = fmt::format("{:04d}-{:02d}-{:02d}", day.year(), day.month(), day.day());
          break;
        case Unit::month:
          tick.label = fmt::format("{:04d}-{:02d}", shown.year(), shown.month());
          break;
        case Unit::year:
          tick.label = fmt::format("{:04d}", shown.year());
          break;
      }
      ticks.push_back(std::move(tick));
    }
    switch (step.unit) {
      case Unit::second:
        at += step.count;
        break;
      case Unit::day:
        at = cctz::civil_second(cctz::civil_day(at) + step.count);
        break;
      case Unit::month:
        at = cctz::civil_second(cctz::civil_month(at) + step.count);
        break;
      case Unit::year:
        at = cctz::civil_second(cctz::civil_year(at) + step.count);
        break;
    }
  }
  return ticks;
}

}  // namespace stagewell::plot_detail
