// Local calendar days: the instants a day spans in a time zone.
#include <cctz/time_zone.h>

#include <chrono>
#include <cmath>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

// Floor division for times before 1970 (C++ division truncates toward zero).
std::int64_t floor_div(std::int64_t a, std::int64_t b) {
  const std::int64_t q = a / b;
  return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

}  // namespace

std::int64_t DayCalendar::start_ms(Day day) const {
  const auto found = zone_.cctz_zone().lookup(cctz::civil_second(day));
  // Midnight normally exists once. Where a DST change skips it, the day starts at the change
  // (`trans`, the first instant that exists); where midnight occurs twice, at the first (`pre`).
  const auto start = found.kind == cctz::time_zone::civil_lookup::SKIPPED ? found.trans : found.pre;
  return static_cast<std::int64_t>(start.time_since_epoch().count()) * 1000;
}

Day DayCalendar::day_of(std::int64_t time_ms) const {
  const cctz::time_point<cctz::seconds> at{cctz::seconds(floor_div(time_ms, 1000))};
  Day day(cctz::convert(at, zone_.cctz_zone()));
  // The local date and the [start, end) of the days differ only when a zone repeats midnight;
  // follow the days' bounds so that the days partition time.
  while (time_ms >= start_ms(day + 1)) ++day;
  while (time_ms < start_ms(day)) --day;
  return day;
}

DayRules rules_for(const SiteConfig& site, const DailySpec& daily) {
  DayRules rules;
  rules.max_gap_ms = static_cast<std::int64_t>(std::llround(site.checks.max_gap_s * 1000.0));
  rules.excluded = daily.excluded;
  rules.bridged = daily.bridged;
  return rules;
}

}  // namespace stagewell::daily
