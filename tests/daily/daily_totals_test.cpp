// Totals, the 7-day minimum and peaks over months, calendar years and water years, on figures
// whose answers are worked out by hand [C].
#include <doctest/doctest.h>

#include <vector>

#include "stagewell/statistics.hpp"

namespace stagewell::stats {
namespace {

constexpr std::int64_t kDayMs = 86'400'000;

daily::DayCalendar utc() {
  auto zone = TimeZone::parse("UTC");
  REQUIRE(zone.has_value());
  return daily::DayCalendar(*zone);
}

// 2025-09-20 .. 2025-10-15 (26 days). Daily mean 10, except 1.0 from Sep 27 to Oct 3; Oct 10 is
// half covered; the highest reading (99) is on Oct 12.
std::vector<DayFigures> sample_days() {
  const auto calendar = utc();
  std::vector<DayFigures> days;
  for (Day day(2025, 9, 20); day <= Day(2025, 10, 15); ++day) {
    DayFigures d;
    d.day = day;
    d.start_ms = calendar.start_ms(day);
    d.end_ms = d.start_ms + kDayMs;
    const double mean = (day >= Day(2025, 9, 27) && day <= Day(2025, 10, 3)) ? 1.0 : 10.0;
    d.covered_ms = day == Day(2025, 10, 10) ? kDayMs / 2 : kDayMs;
    d.coverage = static_cast<double>(d.covered_ms) / kDayMs;
    d.mean_discharge = mean;
    d.volume = mean * static_cast<double>(d.covered_ms) / 1000.0;
    d.max_discharge = day == Day(2025, 10, 12) ? 99.0 : 2 * mean;
    d.max_time_ms = d.start_ms + 3'600'000;
    d.readings = 24;
    days.push_back(d);
  }
  return days;
}

TEST_CASE("water years start in the configured month and are named by the year they end in") {
  // USGS usage: the water year runs from 1 October to 30 September and is designated by the
  // calendar year in which it ends (USGS water-data reports, definitions; from memory).
  const auto days = sample_days();
  const auto wy =
      totals(days, Day(2025, 9, 20), Day(2025, 10, 15), PeriodKind::water_year, 10, utc());
  REQUIRE(wy.size() == 2);
  CHECK(wy[0].label == "WY2025");
  CHECK(wy[0].first == Day(2025, 9, 20));  // clipped to the range asked for
  CHECK(wy[0].last == Day(2025, 9, 30));
  CHECK(wy[1].label == "WY2026");
  CHECK(wy[1].first == Day(2025, 10, 1));
  // A January start makes the water year the calendar year.
  const auto january =
      totals(days, Day(2025, 9, 20), Day(2025, 10, 15), PeriodKind::water_year, 1, utc());
  REQUIRE(january.size() == 1);
  CHECK(january[0].label == "WY2025");
}

TEST_CASE("monthly totals add the days' volumes; coverage is of the whole month") {
  const auto days = sample_days();
  const auto months =
      totals(days, Day(2025, 9, 20), Day(2025, 10, 15), PeriodKind::month, 10, utc());
  REQUIRE(months.size() == 2);
  // September 20-30: 7 days at 10 and 4 at 1 (Sep 27-30), 86,400 s each [C]. The range cuts
  // September, but its coverage is of the whole month: 11 covered days of 30 [C].
  CHECK(months[0].label == "2025-09");
  CHECK(months[0].volume == doctest::Approx((7 * 10.0 + 4 * 1.0) * 86400));
  CHECK(months[0].coverage() == doctest::Approx(11.0 / 30));
  CHECK(months[0].length_ms == 30 * kDayMs);
  CHECK(*months[0].mean_discharge == doctest::Approx(74.0 / 11));
  // October 1-15: 3 days at 1, 11 at 10, and Oct 10 at 10 for half a day [C]; 14.5 covered days
  // of October's 31 [C].
  CHECK(months[1].volume == doctest::Approx((3 * 1.0 + 11 * 10.0 + 0.5 * 10.0) * 86400));
  CHECK(months[1].coverage() == doctest::Approx(14.5 / 31));
  // Asked for September alone, the same coverage: it never depends on the range [C].
  const auto september =
      totals(days, Day(2025, 9, 1), Day(2025, 9, 30), PeriodKind::month, 10, utc());
  REQUIRE(september.size() == 1);
  CHECK(september[0].coverage() == doctest::Approx(11.0 / 30));
  CHECK(months[1].days_with_figures == 15);
  CHECK(*months[1].peak_discharge == 99.0);
  CHECK(*months[1].peak_time_ms == utc().start_ms(Day(2025, 10, 12)) + 3'600'000);
}

TEST_CASE("the 7-day minimum: complete days, consecutive, within the year") {
  const auto days = sample_days();
  const auto years =
      totals(days, Day(2025, 9, 20), Day(2025, 10, 15), PeriodKind::calendar_year, 10, utc());
  REQUIRE(years.size() == 1);
  // Calendar 2025 holds the whole low week, Sep 27 - Oct 3 [C].
  CHECK(*years[0].min_7day_mean == doctest::Approx(1.0));
  CHECK(*years[0].min_7day_first == Day(2025, 9, 27));
  const auto wy =
      totals(days, Day(2025, 9, 20), Day(2025, 10, 15), PeriodKind::water_year, 10, utc());
  // WY2025 ends on Sep 30: its lowest window is Sep 24-30 = (3 x 10 + 4 x 1) / 7 [C].
  CHECK(*wy[0].min_7day_mean == doctest::Approx(34.0 / 7));
  CHECK(*wy[0].min_7day_first == Day(2025, 9, 24));
  // WY2026: Oct 10 is incomplete, leaving runs Oct 1-9 and Oct 11-15 (too short); Oct 1-7 =
  // (3 x 1 + 4 x 10) / 7 [C].
  CHECK(*wy[1].min_7day_mean == doctest::Approx(43.0 / 7));
  CHECK(*wy[1].min_7day_first == Day(2025, 10, 1));
  // Only 5 days in a range: no 7-day window at all.
  const auto short_range =
      totals(days, Day(2025, 10, 11), Day(2025, 10, 15), PeriodKind::month, 10, utc());
  CHECK_FALSE(short_range[0].min_7day_mean.has_value());
}

TEST_CASE("a period without figures is all missing time") {
  const std::vector<DayFigures> none;
  const auto months = totals(none, Day(2026, 1, 1), Day(2026, 2, 28), PeriodKind::month, 10, utc());
  REQUIRE(months.size() == 2);
  CHECK(months[1].length_ms == 28 * kDayMs);
  CHECK(months[1].coverage() == 0.0);
  CHECK_FALSE(months[1].mean_discharge.has_value());
  CHECK_FALSE(months[1].peak_discharge.has_value());
}

}  // namespace
}  // namespace stagewell::stats
