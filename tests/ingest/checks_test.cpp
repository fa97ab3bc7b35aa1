// SiteChecker. The thresholds are this program's definitions (see checks.hpp), not published
// values, so each check is tested just on and just past its threshold with numbers that are exact
// in binary (0.25, 0.5, 1.5 ...), and the expected flags follow from the written definitions.
// That such checks exist (range, spike, rate of change, flatline, gap, timing) is common practice
// in screening continuous water-level records.
#include "stagewell/checks.hpp"

#include <doctest/doctest.h>

#include <vector>

namespace stagewell {
namespace {

constexpr std::int64_t kT0 = 1772345700000;  // 2026-03-01T06:15:00Z
constexpr std::int64_t kMinute = 60'000;
constexpr std::int64_t kHour = 60 * kMinute;
constexpr std::int64_t kNow = kT0 + 30 * 24 * kHour;  // well after every reading

// Every check off; each test turns on the one it is about.
ChecksSpec all_off() {
  ChecksSpec spec;
  spec.flatline_s = 0;
  spec.max_gap_s = 0;
  spec.max_clock_skew_s = 300;
  return spec;
}

Flags flags_of(SiteChecker& checker, std::int64_t time_ms, double stage, std::int64_t now = kNow) {
  const CheckResult result = checker.check(time_ms, stage, now);
  CHECK(result.earlier.empty());
  return result.flags;
}

std::vector<std::int64_t> spiked_times(const CheckResult& result) {
  std::vector<std::int64_t> times;
  for (const auto& earlier : result.earlier) {
    CHECK(earlier.flags == Flags(Flag::spike));
    times.push_back(earlier.time_ms);
  }
  return times;
}

TEST_CASE("out_of_range: strictly outside [min_stage, max_stage] (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.min_stage = 0.25;
  spec.max_stage = 3.0;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 0.25).empty());
  CHECK(flags_of(checker, kT0 + kMinute, 0.24609375) == Flags(Flag::out_of_range));
  CHECK(flags_of(checker, kT0 + 2 * kMinute, 3.0).empty());
  CHECK(flags_of(checker, kT0 + 3 * kMinute, 3.00390625) == Flags(Flag::out_of_range));
  // Unset bounds check nothing.
  SiteChecker open(all_off());
  CHECK(flags_of(open, kT0, -1e9).empty());
  CHECK(flags_of(open, kT0 + kMinute, 1e9).empty());
}

TEST_CASE("future: more than max_clock_skew ahead of now (definition, see checks.hpp)") {
  SiteChecker checker(all_off());  // skew 300 s
  CHECK(flags_of(checker, kT0 + 300'000, 1.0, kT0).empty());
  CHECK(flags_of(checker, kT0 + 300'001, 1.0, kT0) == Flags(Flag::future));
  // A far-future reading changes no state: the next ordinary reading is not late.
  CHECK(flags_of(checker, kT0 + 365 * 24 * kHour, 1.0, kT0) == Flags(Flag::future));
  CHECK(flags_of(checker, kT0 + 301'000, 1.0, kT0 + kMinute).empty());
  REQUIRE(checker.latest_time_ms());
  CHECK(*checker.latest_time_ms() == kT0 + 301'000);
}

TEST_CASE("late: earlier than the latest time seen; the same time is not late") {
  SiteChecker checker(all_off());
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 15 * kMinute, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 15 * kMinute, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 15 * kMinute - 1, 1.0) == Flags(Flag::late));
}

TEST_CASE("gap: more than max_gap since the previous reading (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.max_gap_s = 3600;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());  // no previous reading: no gap
  CHECK(flags_of(checker, kT0 + kHour, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 2 * kHour + 1, 1.0) == Flags(Flag::gap));
  // Off when max_gap is 0.
  SiteChecker off(all_off());
  CHECK(flags_of(off, kT0, 1.0).empty());
  CHECK(flags_of(off, kT0 + 100 * kHour, 1.0).empty());
}

TEST_CASE("gap counts out-of-range readings: the sensor was reporting") {
  ChecksSpec spec = all_off();
  spec.max_gap_s = 3600;
  spec.max_stage = 5.0;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + kHour, 9.0) == Flags(Flag::out_of_range));
  CHECK(flags_of(checker, kT0 + 2 * kHour, 1.0).empty());
}

TEST_CASE("unsteady: |change| / hours > max_rate (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.max_rate = 0.5;  // stage units per hour
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + kHour, 1.5).empty());      // exactly 0.5 per hour
  CHECK(flags_of(checker, kT0 + 2 * kHour, 1.0).empty());  // falling, exactly 0.5 per hour
  // 0.5 in 59 minutes is 0.508 per hour.
  CHECK(flags_of(checker, kT0 + 2 * kHour + 59 * kMinute, 1.5) == Flags(Flag::unsteady));
  // Two readings at the same time are not compared.
  CHECK(flags_of(checker, kT0 + 2 * kHour + 59 * kMinute, 9.0).empty());
}

TEST_CASE("unsteady skips out-of-range neighbours (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.max_rate = 0.5;
  spec.max_stage = 10.0;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 15 * kMinute, 50.0) == Flags(Flag::out_of_range));
  // Compared with 1.0 half an hour earlier (0.25 per hour), not with 50.0.
  CHECK(flags_of(checker, kT0 + 30 * kMinute, 1.125).empty());
}

TEST_CASE("spike: a jump of at least `spike` that comes back within spike/2, flagged later") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  spec.spike_window = 3;
  SiteChecker checker(spec);
  const auto at = [](int i) { return kT0 + i * 15 * kMinute; };
  CHECK(checker.check(at(0), 1.0, kNow).flags.empty());
  CHECK(checker.check(at(1), 1.5, kNow).earlier.empty());     // jump of exactly 0.5: not yet known
  const CheckResult back = checker.check(at(2), 1.25, kNow);  // exactly spike/2 from 1.0
  CHECK(back.flags.empty());                                  // the reading that came back
  CHECK(spiked_times(back) == std::vector<std::int64_t>{at(1)});
  // Downward too.
  CHECK(checker.check(at(3), 0.75, kNow).earlier.empty());
  CHECK(spiked_times(checker.check(at(4), 1.25, kNow)) == std::vector<std::int64_t>{at(3)});
}

TEST_CASE("spike: a smaller jump is not a spike") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  SiteChecker checker(spec);
  CHECK(checker.check(kT0, 1.0, kNow).earlier.empty());
  CHECK(checker.check(kT0 + kMinute, 1.4375, kNow).earlier.empty());
  CHECK(checker.check(kT0 + 2 * kMinute, 1.0, kNow).earlier.empty());
}

TEST_CASE("spike: the excursion may last spike_window readings, not more") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  spec.spike_window = 3;
  const auto at = [](int i) { return kT0 + i * kMinute; };

  SiteChecker three(spec);
  three.check(at(0), 1.0, kNow);
  for (int i = 1; i <= 3; ++i) CHECK(three.check(at(i), 2.0, kNow).earlier.empty());
  CHECK(spiked_times(three.check(at(4), 1.0, kNow)) ==
        std::vector<std::int64_t>{at(1), at(2), at(3)});

  SiteChecker four(spec);
  four.check(at(0), 1.0, kNow);
  for (int i = 1; i <= 4; ++i) CHECK(four.check(at(i), 2.0, kNow).earlier.empty());
  CHECK(four.check(at(5), 1.0, kNow).earlier.empty());  // a change of level, then another
}

TEST_CASE("spike: coming back to more than spike/2 from the old level is not coming back") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  spec.spike_window = 3;
  SiteChecker checker(spec);
  const auto at = [](int i) { return kT0 + i * kMinute; };
  checker.check(at(0), 1.0, kNow);
  CHECK(checker.check(at(1), 1.5, kNow).earlier.empty());
  CHECK(checker.check(at(2), 1.2578125, kNow).earlier.empty());  // 0.2578 > 0.25: still away
  CHECK(checker.check(at(3), 1.5, kNow).earlier.empty());
  CHECK(checker.check(at(4), 1.5, kNow).earlier.empty());  // fourth reading away: level changed
  CHECK(checker.check(at(5), 1.5, kNow).earlier.empty());
}

TEST_CASE("spike: out-of-range readings are not part of an excursion") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  spec.spike_window = 3;
  spec.max_stage = 10.0;
  SiteChecker checker(spec);
  const auto at = [](int i) { return kT0 + i * kMinute; };
  checker.check(at(0), 1.0, kNow);
  checker.check(at(1), 1.5, kNow);
  CHECK(checker.check(at(2), 99.0, kNow).flags == Flags(Flag::out_of_range));
  checker.check(at(3), 1.5, kNow);
  checker.check(at(4), 1.5, kNow);
  CHECK(spiked_times(checker.check(at(5), 1.0, kNow)) ==
        std::vector<std::int64_t>{at(1), at(3), at(4)});
}

TEST_CASE("flatline: identical for more than `flatline` (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.flatline_s = 3600;
  SiteChecker checker(spec);
  const auto at = [](int quarter) { return kT0 + quarter * 15 * kMinute; };
  for (int i = 0; i <= 4; ++i) CHECK(flags_of(checker, at(i), 1.0).empty());  // up to 1 h exactly
  CHECK(flags_of(checker, at(5), 1.0) == Flags(Flag::flatline));
  CHECK(flags_of(checker, at(6), 1.0) == Flags(Flag::flatline));
  CHECK(flags_of(checker, at(7), 1.0000000001).empty());  // any change restarts the run
  CHECK(flags_of(checker, at(11), 1.0000000001).empty());
  CHECK(flags_of(checker, at(11) + 1, 1.0000000001) == Flags(Flag::flatline));

  SiteChecker off(all_off());  // flatline_s = 0
  for (int i = 0; i < 100; ++i) CHECK(flags_of(off, at(i), 1.0).empty());
}

TEST_CASE("flatline: an out-of-range reading neither joins nor breaks the run") {
  ChecksSpec spec = all_off();
  spec.flatline_s = 3600;
  spec.max_stage = 2.0;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 30 * kMinute, 5.0) == Flags(Flag::out_of_range));
  CHECK(flags_of(checker, kT0 + 61 * kMinute, 1.0) == Flags(Flag::flatline));
}

TEST_CASE("flatline: a reading after a gap starts a new run (definition, see checks.hpp)") {
  ChecksSpec spec = all_off();
  spec.flatline_s = 3600;
  spec.max_gap_s = 3600;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  // The same stage eight months (240 days) later: a gap, and the first reading of a new run.
  const std::int64_t later = kT0 + 240 * 24 * kHour;
  const std::int64_t now = later + kHour;
  CHECK(flags_of(checker, later, 1.0, now) == Flags(Flag::gap));
  // That run is flagged only once it lasts more than `flatline` itself.
  CHECK(flags_of(checker, later + 30 * kMinute, 1.0, now).empty());
  CHECK(flags_of(checker, later + kHour, 1.0, now + kHour).empty());
  CHECK(flags_of(checker, later + kHour + 1, 1.0, now + kHour) == Flags(Flag::flatline));

  // Exactly max_gap apart is not a gap ("more than"), so the run goes on.
  SiteChecker edge(spec);
  CHECK(flags_of(edge, kT0, 1.0).empty());
  CHECK(flags_of(edge, kT0 + kHour, 1.0).empty());
  CHECK(flags_of(edge, kT0 + 2 * kHour, 1.0) == Flags(Flag::flatline));
  // Just past it is: a new run from here.
  CHECK(flags_of(edge, kT0 + 3 * kHour + 1, 1.0) == Flags(Flag::gap));
  CHECK(flags_of(edge, kT0 + 4 * kHour, 1.0).empty());

  // With max_gap off, time never breaks a run.
  spec.max_gap_s = 0;
  SiteChecker no_gap(spec);
  CHECK(flags_of(no_gap, kT0, 1.0).empty());
  CHECK(flags_of(no_gap, later, 1.0, now) == Flags(Flag::flatline));
}

TEST_CASE("flatline: seed() applies the gap rule to the stored run") {
  ChecksSpec spec = all_off();
  spec.flatline_s = 3600;
  spec.max_gap_s = 3600;
  // A reading, then months offline, then the same stage again just before the restart.
  const std::int64_t later = kT0 + 240 * 24 * kHour;
  const std::vector<PastReading> stored{{kT0, 1.0}, {later, 1.0}};
  SiteChecker checker(spec);
  checker.seed(stored);
  CHECK(flags_of(checker, later + 30 * kMinute, 1.0, later + kHour).empty());
}

TEST_CASE("late reading: gap is judged against its true previous reading in time") {
  ChecksSpec spec = all_off();
  spec.max_gap_s = 3600;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + 3 * kHour, 1.0) == Flags(Flag::gap));
  CHECK(flags_of(checker, kT0 + 30 * kMinute, 1.0) == Flags(Flag::late));
  // Previous in time is now the late reading at +30 min: 90 minutes -> gap.
  CHECK(flags_of(checker, kT0 + 2 * kHour, 1.0) == (Flags(Flag::late) |= Flag::gap));
  // Previous in time is +2 h: 50 minutes -> no gap.
  CHECK(flags_of(checker, kT0 + 2 * kHour + 50 * kMinute, 1.0) == Flags(Flag::late));
}

TEST_CASE("late reading: unsteady against the in-range readings before and after it") {
  ChecksSpec spec = all_off();
  spec.max_rate = 0.5;
  SiteChecker checker(spec);
  CHECK(flags_of(checker, kT0, 1.0).empty());
  CHECK(flags_of(checker, kT0 + kHour, 1.0).empty());
  // 0.125 in 30 min each way: 0.25 per hour.
  CHECK(flags_of(checker, kT0 + 30 * kMinute, 1.125) == Flags(Flag::late));
  // 0.5 in 20 min from the reading before (+0 h): 1.5 per hour.
  CHECK(flags_of(checker, kT0 + 20 * kMinute, 1.5) == (Flags(Flag::late) |= Flag::unsteady));

  SiteChecker after(spec);
  CHECK(flags_of(after, kT0, 1.0).empty());
  CHECK(flags_of(after, kT0 + kHour, 2.0) == Flags(Flag::unsteady));
  // Level with the reading before; 1.0 in 45 min to the one after.
  CHECK(flags_of(after, kT0 + 15 * kMinute, 1.0) == (Flags(Flag::late) |= Flag::unsteady));
}

TEST_CASE("late reading older than the window: only late and range checks") {
  ChecksSpec spec = all_off();
  spec.max_gap_s = 600;
  spec.max_rate = 0.5;
  spec.max_stage = 5.0;
  SiteChecker checker(spec, 4);
  for (int i = 0; i < 6; ++i) checker.check(kT0 + i * 15 * kMinute, 1.0, kNow);
  // The window now starts at +30 min. +20 min would be a gap and a fast rise anywhere else.
  CHECK(flags_of(checker, kT0 + 20 * kMinute, 4.0) == Flags(Flag::late));
  CHECK(flags_of(checker, kT0 + 21 * kMinute, 6.0) == (Flags(Flag::late) |= Flag::out_of_range));
  // Inside the window the same reading is judged.
  CHECK(flags_of(checker, kT0 + 35 * kMinute, 4.0) == (Flags(Flag::late) |= Flag::unsteady));
}

TEST_CASE("late readings take no part in spike or flatline") {
  ChecksSpec spec = all_off();
  spec.spike = 0.5;
  spec.flatline_s = 3600;
  SiteChecker checker(spec);
  checker.check(kT0, 1.0, kNow);
  checker.check(kT0 + 30 * kMinute, 1.0, kNow);
  CHECK(flags_of(checker, kT0 + 10 * kMinute, 3.0) == Flags(Flag::late));
  CHECK(flags_of(checker, kT0 + 45 * kMinute, 1.0).empty());  // no spike for the late 3.0
  CHECK(flags_of(checker, kT0 + 61 * kMinute, 1.0) == Flags(Flag::flatline));  // run unbroken
}

TEST_CASE("seed restores latest time, window, spike level and flatline run") {
  ChecksSpec spec = all_off();
  spec.max_gap_s = 3600;
  spec.max_rate = 0.5;
  spec.spike = 0.5;
  spec.flatline_s = 3600;
  const std::vector<PastReading> stored{
      {kT0 + 30 * kMinute, 1.0}, {kT0, 1.0}, {kT0 + 45 * kMinute, 1.0}, {kT0 + 15 * kMinute, 1.0}};

  SiteChecker late(spec);
  late.seed(stored);
  REQUIRE(late.latest_time_ms());
  CHECK(*late.latest_time_ms() == kT0 + 45 * kMinute);
  CHECK(flags_of(late, kT0 + 10 * kMinute, 1.0) == Flags(Flag::late));

  SiteChecker flat(spec);
  flat.seed(stored);
  CHECK(flags_of(flat, kT0 + 61 * kMinute, 1.0) == Flags(Flag::flatline));

  SiteChecker rate(spec);
  rate.seed(stored);
  CHECK(flags_of(rate, kT0 + 75 * kMinute, 1.375) == Flags(Flag::unsteady));  // 0.75 per hour

  SiteChecker spike(spec);
  spike.seed(stored);
  CHECK(spike.check(kT0 + 50 * kMinute, 1.5, kNow).earlier.empty());
  CHECK(spiked_times(spike.check(kT0 + 55 * kMinute, 1.0, kNow)) ==
        std::vector<std::int64_t>{kT0 + 50 * kMinute});

  SiteChecker gap(spec);
  gap.seed(stored);
  CHECK(flags_of(gap, kT0 + 45 * kMinute + kHour + 1, 1.25) == Flags(Flag::gap));
}

}  // namespace
}  // namespace stagewell
