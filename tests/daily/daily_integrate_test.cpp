// One day's figures against closed-form arithmetic [C]: the trapezoidal rule is exact for
// discharge that varies linearly between readings, so each expected volume is written out by hand
// (trapezoid area = mean of the two ends x duration). The definitions checked are those of
// daily.hpp.
#include <doctest/doctest.h>

#include <vector>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

constexpr std::int64_t kMinute = 60'000;
constexpr std::int64_t kHour = 60 * kMinute;
constexpr std::int64_t kDay = 24 * kHour;

DayCalendar calendar(std::string_view zone = "UTC") {
  auto parsed = TimeZone::parse(zone);
  REQUIRE(parsed.has_value());
  return DayCalendar(*parsed);
}

// 2026-03-01T00:00:00Z in ms (python: datetime(2026, 3, 1, tzinfo=timezone.utc)).
constexpr std::int64_t kMarch1 = 1772323200000;

DayReading at(std::int64_t time_ms, std::optional<double> q, Flags flags = {}) {
  return DayReading{time_ms, q, flags};
}

DayRules rules(std::int64_t max_gap_ms = kHour) {
  DayRules r;
  r.max_gap_ms = max_gap_ms;
  return r;  // defaults: out_of_range excluded, spike bridged
}

TEST_CASE("a steady flow all day gives flow x 86,400 s") {
  std::vector<DayReading> readings;
  for (std::int64_t t = kMarch1 - 10 * kMinute; t <= kMarch1 + kDay + 10 * kMinute;
       t += 10 * kMinute) {
    readings.push_back(at(t, 2.5));
  }
  const auto f = compute_day(readings, Day(2026, 3, 1), calendar(), rules());
  REQUIRE(f.volume.has_value());
  CHECK(*f.volume == doctest::Approx(2.5 * 86400.0).epsilon(1e-12));  // [C] 216,000 m^3
  CHECK(*f.mean_discharge == doctest::Approx(2.5).epsilon(1e-12));
  CHECK(f.coverage == 1.0);
  CHECK(f.complete());
  CHECK(f.readings == 144);  // 00:00, 00:10 ... 23:50; the reading at 24:00 is the next day's
  CHECK(f.flagged == 0);
}

TEST_CASE("an interval across midnight is split where the straight line crosses it") {
  // 23:50 at 0 m^3/s, 00:10 at 20 m^3/s: at midnight the line is at 10 m^3/s [C].
  const std::vector<DayReading> readings{at(kMarch1 - 10 * kMinute, 0.0),
                                         at(kMarch1 + 10 * kMinute, 20.0)};
  const auto before = compute_day(readings, Day(2026, 2, 28), calendar(), rules());
  const auto after = compute_day(readings, Day(2026, 3, 1), calendar(), rules());
  CHECK(*before.volume == doctest::Approx((0.0 + 10.0) / 2 * 600).epsilon(1e-12));  // 3,000
  CHECK(*after.volume == doctest::Approx((10.0 + 20.0) / 2 * 600).epsilon(1e-12));  // 9,000
  CHECK(before.covered_ms == 10 * kMinute);
  CHECK(after.covered_ms == 10 * kMinute);
  CHECK(*after.mean_discharge == doctest::Approx(15.0).epsilon(1e-12));  // 9,000 / 600 s
  // The interpolated 10 m^3/s at midnight is no reading: each day's extremes are its own readings.
  CHECK(*after.min_discharge == 20.0);
  CHECK(*after.min_time_ms == kMarch1 + 10 * kMinute);
  CHECK(*before.max_discharge == 0.0);
}

TEST_CASE("an interval longer than max_gap is missing time; exactly max_gap is integrated") {
  const std::int64_t t0 = kMarch1 + 6 * kHour;
  const std::vector<DayReading> readings{at(t0, 1.0), at(t0 + kHour, 1.0),
                                         at(t0 + 2 * kHour + 1, 3.0)};
  const auto f = compute_day(readings, Day(2026, 3, 1), calendar(), rules(kHour));
  CHECK(f.covered_ms == kHour);  // the second interval is 1 h + 1 ms > max_gap
  CHECK(*f.volume == doctest::Approx(3600.0).epsilon(1e-12));
  CHECK(f.coverage == doctest::Approx(1.0 / 24.0).epsilon(1e-12));
  CHECK(*f.max_discharge == 3.0);  // the reading after the gap still counts as a reading
  CHECK(f.readings == 3);
}

TEST_CASE("an excluded reading makes the time around it missing; a bridged one is joined over") {
  const std::int64_t t0 = kMarch1 + 6 * kHour;
  std::vector<DayReading> readings{
      at(t0, 2.0), at(t0 + 10 * kMinute, 50.0, Flag::spike), at(t0 + 20 * kMinute, 4.0),
      at(t0 + 30 * kMinute, std::nullopt, Flag::out_of_range), at(t0 + 40 * kMinute, 4.0)};
  const auto f = compute_day(readings, Day(2026, 3, 1), calendar(), rules());
  // Bridged spike: 2 -> 4 over 20 min = 3 x 1200 s = 3,600 [C]; 20..40 min missing (excluded).
  CHECK(f.covered_ms == 20 * kMinute);
  CHECK(*f.volume == doctest::Approx(3600.0).epsilon(1e-12));
  CHECK(*f.max_discharge == 4.0);              // the spike is not used
  CHECK(*f.max_time_ms == t0 + 20 * kMinute);  // equal values: the earliest
  CHECK(f.readings == 5);
  CHECK(f.flagged == 2);
  CHECK(f.flag_counts == std::vector<FlagCount>{{Flag::out_of_range, 1}, {Flag::spike, 1}});

  SUBCASE("configured the other way round") {
    DayRules swapped = rules();
    swapped.excluded = Flag::spike;
    swapped.bridged = Flag::out_of_range;
    const auto g = compute_day(readings, Day(2026, 3, 1), calendar(), swapped);
    // 0..20 missing (spike excluded); 20 -> 40 bridged at 4: 4 x 1200 s = 4,800 [C].
    CHECK(g.covered_ms == 20 * kMinute);
    CHECK(*g.volume == doctest::Approx(4800.0).epsilon(1e-12));
  }
  SUBCASE("a flag marked include is used as is") {
    DayRules none = rules();
    none.excluded = Flag::out_of_range;
    none.bridged = Flags{};
    const auto g = compute_day(readings, Day(2026, 3, 1), calendar(), none);
    // (2+50)/2*600 + (50+4)/2*600 = 15,600 + 16,200 = 31,800 [C]
    CHECK(*g.volume == doctest::Approx(31800.0).epsilon(1e-12));
    CHECK(*g.max_discharge == 50.0);
  }
}

TEST_CASE("a reading without discharge and no treatment of its own is left out") {
  const std::int64_t t0 = kMarch1 + 6 * kHour;
  const std::vector<DayReading> readings{at(t0, 1.0), at(t0 + 10 * kMinute, std::nullopt),
                                         at(t0 + 20 * kMinute, 1.0)};
  const auto f = compute_day(readings, Day(2026, 3, 1), calendar(), rules());
  CHECK(f.covered_ms == 0);
  CHECK_FALSE(f.volume.has_value());
  CHECK_FALSE(f.mean_discharge.has_value());
  CHECK(f.coverage == 0.0);
  CHECK_FALSE(f.empty());  // it has readings, so it has a row
}

TEST_CASE("on the 23-hour and 25-hour days a steady flow gives flow x 82,800 s and 90,000 s") {
  const auto denver = calendar("America/Denver");
  for (const auto& [day, hours] :
       {std::pair{Day(2026, 3, 8), 23}, std::pair{Day(2026, 11, 1), 25}}) {
    std::vector<DayReading> readings;
    for (std::int64_t t = denver.start_ms(day) - kHour; t <= denver.start_ms(day + 1) + kHour;
         t += 15 * kMinute) {
      readings.push_back(at(t, 1.5));
    }
    const auto f = compute_day(readings, day, denver, rules());
    CHECK(f.length_ms() == hours * kHour);
    CHECK(*f.volume == doctest::Approx(1.5 * 3600.0 * hours).epsilon(1e-12));
    CHECK(f.coverage == 1.0);
    CHECK(f.readings == hours * 4);
  }
}

TEST_CASE("a day with no reading and no covered time is empty; every day of a record is listed") {
  const std::vector<DayReading> readings{at(kMarch1 + kHour, 1.0), at(kMarch1 + 3 * kDay, 1.0)};
  const auto days = compute_days(readings, calendar(), rules());
  REQUIRE(days.size() == 2);  // 1 and 4 March; 2 and 3 March have nothing
  CHECK(days[0].day == Day(2026, 3, 1));
  CHECK(days[1].day == Day(2026, 3, 4));
  CHECK(compute_day(readings, Day(2026, 3, 2), calendar(), rules()).empty());
  // With max_gap of 4 days the whole stretch is one interval: the days between are covered.
  const auto long_gap = compute_days(readings, calendar(), rules(4 * kDay));
  CHECK(long_gap.size() == 4);
  CHECK(long_gap[1].coverage == 1.0);
  CHECK(long_gap[1].readings == 0);
}

}  // namespace
}  // namespace stagewell::daily
