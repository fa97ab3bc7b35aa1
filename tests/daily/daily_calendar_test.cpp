// Local days and their bounds. Expected instants were computed independently with Debian's
// /usr/bin/python3 3.11 (zoneinfo.ZoneInfo over the system tzdata): milliseconds since the epoch of
// datetime(y, m, d, tzinfo=zone). The DST dates follow the US rule (second Sunday of March, first
// Sunday of November; Energy Policy Act of 2005, from memory), which tzdata encodes.
#include <doctest/doctest.h>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

DayCalendar calendar(std::string_view zone) {
  auto parsed = TimeZone::parse(zone);
  REQUIRE_MESSAGE(parsed.has_value(), parsed.error().message);
  return DayCalendar(*parsed);
}

constexpr std::int64_t kHourMs = 3'600'000;

TEST_CASE("America/Denver: the spring-forward day lasts 23 hours, the fall-back day 25") {
  const auto denver = calendar("America/Denver");
  // python: datetime(2026, 3, 7 | 8 | 9, tzinfo=ZoneInfo("America/Denver"))
  CHECK(denver.start_ms(Day(2026, 3, 7)) == 1772866800000);
  CHECK(denver.start_ms(Day(2026, 3, 8)) == 1772953200000);
  CHECK(denver.start_ms(Day(2026, 3, 9)) == 1773036000000);
  CHECK(denver.start_ms(Day(2026, 3, 9)) - denver.start_ms(Day(2026, 3, 8)) == 23 * kHourMs);
  // python: datetime(2026, 11, 1 | 2, tzinfo=ZoneInfo("America/Denver"))
  CHECK(denver.start_ms(Day(2026, 11, 1)) == 1793512800000);
  CHECK(denver.start_ms(Day(2026, 11, 2)) == 1793602800000);
  CHECK(denver.start_ms(Day(2026, 11, 2)) - denver.start_ms(Day(2026, 11, 1)) == 25 * kHourMs);
}

TEST_CASE("a fixed offset keeps 24-hour days all year") {
  const auto fixed = calendar("-07:00");
  // python: datetime(2026, 3, 8, tzinfo=timezone(timedelta(hours=-7)))
  CHECK(fixed.start_ms(Day(2026, 3, 8)) == 1772953200000);
  CHECK(fixed.start_ms(Day(2026, 3, 9)) - fixed.start_ms(Day(2026, 3, 8)) == 24 * kHourMs);
  CHECK(fixed.start_ms(Day(2026, 11, 2)) - fixed.start_ms(Day(2026, 11, 1)) == 24 * kHourMs);
}

TEST_CASE("where midnight does not exist, the day starts at the change") {
  // tzdata, America/Santiago: on 2022-09-11 clocks went from 00:00 -04 straight to 01:00 -03, so
  // the day's first instant is 2022-09-11T04:00:00Z (python zoneinfo: 1662868800000 ms) and it
  // lasts until local midnight of the 12th (python: 1662951600000 ms), 23 hours.
  const auto santiago = calendar("America/Santiago");
  CHECK(santiago.start_ms(Day(2022, 9, 11)) == 1662868800000);
  CHECK(santiago.start_ms(Day(2022, 9, 12)) == 1662951600000);
  CHECK(santiago.day_of(1662868800000) == Day(2022, 9, 11));
  CHECK(santiago.day_of(1662868800000 - 1) == Day(2022, 9, 10));
}

TEST_CASE("day_of follows the bounds exactly, in the repeated hour too") {
  const auto denver = calendar("America/Denver");
  const std::int64_t start = denver.start_ms(Day(2026, 3, 8));
  CHECK(denver.day_of(start) == Day(2026, 3, 8));
  CHECK(denver.day_of(start - 1) == Day(2026, 3, 7));
  const std::int64_t next = denver.start_ms(Day(2026, 3, 9));
  CHECK(denver.day_of(next - 1) == Day(2026, 3, 8));
  CHECK(denver.day_of(next) == Day(2026, 3, 9));
  // 01:30 local on 2026-11-01 happens twice (07:30Z and 08:30Z): both on the 1st.
  CHECK(denver.day_of(1793518200000) == Day(2026, 11, 1));
  CHECK(denver.day_of(1793518200000 + kHourMs) == Day(2026, 11, 1));
  // Before 1970: negative milliseconds floor to the earlier second.
  const auto utc = calendar("UTC");
  CHECK(utc.day_of(-1) == Day(1969, 12, 31));
  CHECK(utc.start_ms(Day(1969, 12, 31)) == -86'400'000);
}

TEST_CASE("day text is YYYY-MM-DD, and only real dates parse") {
  CHECK(format_day(Day(2026, 3, 8)) == "2026-03-08");
  CHECK(parse_day("2026-03-08") == Day(2026, 3, 8));
  CHECK(parse_day("2024-02-29") == Day(2024, 2, 29));  // a leap day (2024 is divisible by 4)
  CHECK_FALSE(parse_day("2026-02-29").has_value());    // 2026 is not a leap year
  CHECK_FALSE(parse_day("2026-13-01").has_value());
  CHECK_FALSE(parse_day("2026-3-8").has_value());
  CHECK_FALSE(parse_day("2026-03-08T00").has_value());
  CHECK_FALSE(parse_day("20x6-03-08").has_value());
}

}  // namespace
}  // namespace stagewell::daily
