// DaySweep (one pass over readings handed over a stretch at a time) gives exactly the figures of
// compute_days() / compute_day() over all the readings at once, whatever the stretches: across
// both DST changes of America/Denver (a 23-hour and a 25-hour day), in a fixed offset, where a
// zone skips midnight, with holes longer than max_gap, readings without discharge, bridged and
// excluded flags, and a max_gap longer than a day. (The figures themselves are checked against
// independent references in daily_integrate_test.cpp and tests/e2e/daily_figures_test.py.)
#include <doctest/doctest.h>

#include <cmath>
#include <random>
#include <span>
#include <vector>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

constexpr std::int64_t kMinute = 60'000;
constexpr std::int64_t kHour = 60 * kMinute;
constexpr std::int64_t kDay = 24 * kHour;

// 2026-03-05T07:00:00Z, local midnight in Denver (python: datetime(2026, 3, 5,
// tzinfo=ZoneInfo("America/Denver")).timestamp() * 1000). The spring change is on 2026-03-08,
// the autumn one on 2026-11-01 (daily_calendar_test.cpp).
constexpr std::int64_t kMarch5 = 1772694000000;

DayCalendar calendar(std::string_view zone) {
  auto parsed = TimeZone::parse(zone);
  REQUIRE_MESSAGE(parsed.has_value(), parsed.error().message);
  return DayCalendar(*parsed);
}

DayRules rules(std::int64_t max_gap_ms) {
  DayRules r;
  r.max_gap_ms = max_gap_ms;
  r.excluded = Flag::out_of_range;
  r.excluded.set(Flag::flatline);
  r.bridged = Flag::spike;
  return r;
}

// An invented record from `begin`: a reading about every `step_ms` with jitter of up to a quarter
// step, holes of 25 minutes to 30 hours, readings without discharge (out_of_range), spikes
// (bridged), flatlines (excluded), unsteady readings (used), and zero flow.
std::vector<DayReading> invented(std::int64_t begin, std::int64_t end, std::int64_t step_ms,
                                 std::uint64_t seed) {
  std::mt19937_64 random(seed);
  std::uniform_int_distribution<std::int64_t> jitter(-step_ms / 4, step_ms / 4);
  std::uniform_int_distribution<int> roll(0, 999);
  std::uniform_int_distribution<std::int64_t> hole(25 * kMinute, 30 * kHour);
  std::vector<DayReading> out;
  for (std::int64_t t = begin; t < end; t += step_ms) {
    const int r = roll(random);
    if (r < 2) {
      t += hole(random);
      continue;
    }
    DayReading reading{t + jitter(random), 1.5 + std::sin(static_cast<double>(t) / 7.2e6), {}};
    if (r < 12) {
      reading.discharge.reset();
      reading.flags = Flag::out_of_range;
    } else if (r < 20) {
      reading.flags = Flag::spike;
      *reading.discharge += 4.0;
    } else if (r < 26) {
      reading.flags = Flag::flatline;
    } else if (r < 40) {
      reading.flags = Flag::unsteady;
    } else if (r < 45) {
      reading.discharge = 0.0;
      reading.flags = Flag::below_zero_flow;
    }
    if (!out.empty() && reading.time_ms <= out.back().time_ms) continue;  // strictly increasing
    out.push_back(reading);
  }
  return out;
}

// The sweep's days for `readings` handed over `stretch` at a time.
std::vector<DayFigures> swept(std::span<const DayReading> readings, std::size_t stretch,
                              const DayCalendar& cal, const DayRules& r, Day first, Day last) {
  DaySweep sweep(cal, r, first, last);
  for (std::size_t at = 0; at < readings.size(); at += stretch) {
    sweep.add(readings.subspan(at, std::min(stretch, readings.size() - at)));
  }
  return sweep.finish();
}

// compute_day() of each day from `first` to `last` over all the readings, empty days left out.
std::vector<DayFigures> day_by_day(std::span<const DayReading> readings, const DayCalendar& cal,
                                   const DayRules& r, Day first, Day last) {
  std::vector<DayFigures> out;
  for (Day day = first; day <= last; ++day) {
    DayFigures figures = compute_day(readings, day, cal, r);
    if (!figures.empty()) out.push_back(std::move(figures));
  }
  return out;
}

void check_equal(const std::vector<DayFigures>& got, const std::vector<DayFigures>& want) {
  REQUIRE(got.size() == want.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    CAPTURE(format_day(want[i].day));
    CHECK(got[i] == want[i]);  // exactly: the same arithmetic on the same readings
  }
}

TEST_CASE("a sweep equals compute_days over both DST changes, whatever the stretches") {
  const auto denver = calendar("America/Denver");
  const auto r = rules(20 * kMinute);
  // 2026-03-05 to 2026-11-05 (local), one reading about every 7 minutes.
  const auto readings = invented(kMarch5, kMarch5 + 245 * kDay, 7 * kMinute, 20260308);
  REQUIRE(readings.size() > 40'000);
  const auto want = compute_days(readings, denver, r);
  const Day first = denver.day_of(readings.front().time_ms);
  const Day last = denver.day_of(readings.back().time_ms);
  // The DST days are among them, with their own lengths.
  bool spring = false;
  bool autumn = false;
  for (const auto& day : want) {
    if (day.day == Day(2026, 3, 8)) spring = day.length_ms() == 23 * kHour;
    if (day.day == Day(2026, 11, 1)) autumn = day.length_ms() == 25 * kHour;
  }
  CHECK(spring);
  CHECK(autumn);
  for (const std::size_t stretch : {std::size_t{1}, std::size_t{2}, std::size_t{7},
                                    std::size_t{333}, std::size_t{4096}, readings.size()}) {
    CAPTURE(stretch);
    check_equal(swept(readings, stretch, denver, r, first, last), want);
  }
}

TEST_CASE("a sweep over part of the record, or past its ends, equals compute_day day by day") {
  const auto denver = calendar("America/Denver");
  const auto r = rules(20 * kMinute);
  const auto readings = invented(kMarch5, kMarch5 + 20 * kDay, 5 * kMinute, 7);
  // Days before and after the readings have no figures; days inside a longer record are computed
  // from the readings around them (the readings beyond the period are harmless).
  for (const auto& [first, last] :
       {std::pair{Day(2026, 3, 1), Day(2026, 3, 30)}, std::pair{Day(2026, 3, 7), Day(2026, 3, 9)},
        std::pair{Day(2026, 3, 8), Day(2026, 3, 8)}}) {
    CAPTURE(format_day(first));
    CAPTURE(format_day(last));
    const auto want = day_by_day(readings, denver, r, first, last);
    for (const std::size_t stretch : {std::size_t{1}, std::size_t{50}, readings.size()}) {
      check_equal(swept(readings, stretch, denver, r, first, last), want);
    }
  }
  // Nothing handed over: no day has figures.
  DaySweep empty(denver, r, Day(2026, 3, 1), Day(2026, 3, 30));
  CHECK(empty.finish().empty());
  // A period that ends before it starts has no days.
  CHECK(swept(readings, 10, denver, r, Day(2026, 3, 9), Day(2026, 3, 8)).empty());
}

TEST_CASE("a sweep keeps what a max_gap longer than a day needs, in other zones too") {
  // A fixed offset (24-hour days all year) and America/Santiago, which skipped midnight on
  // 2022-09-11 (daily_calendar_test.cpp): the readings run from 2022-09-01 to 2022-10-01.
  constexpr std::int64_t kSeptember1 = 1661990400000;  // 2022-09-01T00:00:00Z (python datetime)
  const auto readings = invented(kSeptember1, kSeptember1 + 30 * kDay, 11 * kMinute, 20220911);
  for (const std::string_view zone : {"-07:00", "America/Santiago"}) {
    CAPTURE(zone);
    const auto cal = calendar(zone);
    for (const std::int64_t max_gap : {std::int64_t{15} * kMinute, 2 * kDay}) {
      CAPTURE(max_gap);
      const auto r = rules(max_gap);
      const auto want = compute_days(readings, cal, r);
      const Day first = cal.day_of(readings.front().time_ms);
      const Day last = cal.day_of(readings.back().time_ms);
      for (const std::size_t stretch : {std::size_t{1}, std::size_t{64}, readings.size()}) {
        CAPTURE(stretch);
        check_equal(swept(readings, stretch, cal, r, first, last), want);
      }
    }
  }
}

}  // namespace
}  // namespace stagewell::daily
