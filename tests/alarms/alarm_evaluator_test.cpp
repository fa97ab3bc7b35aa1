// The alarm evaluator on scripted series. Every expected raise and clear time below was worked by
// hand from the series written beside it, against the rules in alarms.hpp: a threshold alarm
// raises at the reading that completes `hold` of readings past the threshold, and clears at the
// first reading past threshold ± hysteresis; stale is judged by the clock at ticks.
#include <doctest/doctest.h>

#include <cstdint>
#include <optional>
#include <vector>

#include "stagewell/alarms.hpp"

namespace stagewell::alarms {
namespace {

using Change = AlarmEvent::Change;

constexpr std::int64_t kT0 = 1'778'738'400'000;  // 2026-05-14T06:00:00Z (Python datetime)
constexpr std::int64_t kMinute = 60'000;

std::int64_t at(double minutes) { return kT0 + static_cast<std::int64_t>(minutes * kMinute); }

// A scripted series of discharges (m^3/s; nullopt = out_of_range), one every `step` minutes,
// each fed with the clock equal to its time.
std::vector<AlarmEvent> feed(SiteAlarms& alarms, const std::vector<std::optional<double>>& flows,
                             double step_minutes = 5.0, double first_minute = 0.0) {
  std::vector<AlarmEvent> events;
  for (std::size_t i = 0; i < flows.size(); ++i) {
    const std::int64_t t = at(first_minute + step_minutes * static_cast<double>(i));
    Flags flags;
    if (!flows[i]) flags.set(Flag::out_of_range);
    alarms.reading({t, 1.0, flows[i], flags}, t, events);
  }
  return events;
}

AlarmsSpec low_flow(double below, double hysteresis, double hold_s) {
  AlarmsSpec spec;
  spec.low_flow = {below, hysteresis, hold_s};
  return spec;
}

TEST_CASE("low flow raises once the hold is complete, not before, and clears past hysteresis") {
  // below 0.5, clears above 0.5 + 0.1 = 0.6, hold 10 min. Readings every 5 min:
  //   t=0 0.8 | 5 0.4 (run starts) | 10 0.45 (held 5 min) | 15 0.3 (held 10 min: RAISE at 15)
  //   20 0.55 | 25 0.49 | 30 0.59 (all at or below 0.6: stays open) | 35 0.65 (CLEAR at 35)
  SiteAlarms alarms(low_flow(0.5, 0.1, 600.0), kT0);
  const auto events = feed(alarms, {0.8, 0.4, 0.45, 0.3, 0.55, 0.49, 0.59, 0.65});
  REQUIRE(events.size() == 2);
  CHECK(events[0].kind == AlarmKind::low_flow);
  CHECK(events[0].change == Change::raised);
  CHECK(events[0].time_ms == at(15));
  CHECK(events[0].value == 0.3);
  CHECK(events[0].threshold == 0.5);
  CHECK(events[1].change == Change::cleared);
  CHECK(events[1].time_ms == at(35));
  CHECK(events[1].value == 0.65);
  CHECK_FALSE(alarms.is_open(AlarmKind::low_flow));
}

TEST_CASE("a reading back above the threshold restarts the hold") {
  // below 0.5, hold 10 min; readings every 2 min:
  //   t=0 0.4 (run) | 2 0.4 | 4 0.4 | 6 0.4 | 8 0.52 (run broken at 8 min held) | 10 0.4 (new run)
  //   12, 14, 16, 18 0.4 | 20 0.4 (held 10 min since 10: RAISE at 20)
  SiteAlarms alarms(low_flow(0.5, 0.0, 600.0), kT0);
  const auto events = feed(alarms, {0.4, 0.4, 0.4, 0.4, 0.52, 0.4, 0.4, 0.4, 0.4, 0.4, 0.4}, 2.0);
  REQUIRE(events.size() == 1);
  CHECK(events[0].change == Change::raised);
  CHECK(events[0].time_ms == at(20));
}

TEST_CASE("hysteresis stops chatter around the threshold") {
  // Alternating 0.49, 0.51 ten times, hold 0 (worked by hand):
  //   without hysteresis every 0.49 raises and every 0.51 clears: 5 raises, 5 clears;
  //   with hysteresis 0.1 the first 0.49 raises and nothing reaches 0.6 to clear it: 1 event.
  const std::vector<std::optional<double>> hovering{0.49, 0.51, 0.49, 0.51, 0.49,
                                                    0.51, 0.49, 0.51, 0.49, 0.51};
  SiteAlarms chattering(low_flow(0.5, 0.0, 0.0), kT0);
  const auto many = feed(chattering, hovering);
  CHECK(many.size() == 10);
  SiteAlarms steady(low_flow(0.5, 0.1, 0.0), kT0);
  const auto one = feed(steady, hovering);
  REQUIRE(one.size() == 1);
  CHECK(one[0].change == Change::raised);
  CHECK(one[0].time_ms == at(0));
  CHECK(steady.is_open(AlarmKind::low_flow));
}

TEST_CASE("high flow raises above and clears below above - hysteresis") {
  // above 2.0, hysteresis 0.5 (clears below 1.5), hold 0:
  //   t=0 1.0 | 5 2.1 (RAISE) | 10 1.7 | 15 1.5 (not below 1.5: open) | 20 1.4 (CLEAR at 20)
  AlarmsSpec spec;
  spec.high_flow = {2.0, 0.5, 0.0};
  SiteAlarms alarms(spec, kT0);
  const auto events = feed(alarms, {1.0, 2.1, 1.7, 1.5, 1.4});
  REQUIRE(events.size() == 2);
  CHECK(events[0].kind == AlarmKind::high_flow);
  CHECK(events[0].time_ms == at(5));
  CHECK(events[0].value == 2.1);
  CHECK(events[1].change == Change::cleared);
  CHECK(events[1].time_ms == at(20));
}

TEST_CASE("readings without discharge neither raise nor clear") {
  // below 0.5, hold 0: t=0 none | 5 0.4 (RAISE at 5) | 10 none | 15 none (no clear) | 20 0.7
  // (CLEAR)
  SiteAlarms alarms(low_flow(0.5, 0.1, 0.0), kT0);
  const auto events = feed(alarms, {std::nullopt, 0.4, std::nullopt, std::nullopt, 0.7});
  REQUIRE(events.size() == 2);
  CHECK(events[0].time_ms == at(5));
  CHECK(events[1].time_ms == at(20));
}

TEST_CASE("late and future readings are ignored") {
  // below 0.5, hold 0: t=0 0.4 RAISE | t=10 0.45 | then a late t=5 0.9 (would clear: ignored)
  // and a future-flagged t=15 0.9 (ignored). Still open, one event.
  SiteAlarms alarms(low_flow(0.5, 0.0, 0.0), kT0);
  std::vector<AlarmEvent> events;
  alarms.reading({at(0), 1.0, 0.4, {}}, at(0), events);
  alarms.reading({at(10), 1.0, 0.45, {}}, at(10), events);
  alarms.reading({at(5), 1.0, 0.9, Flag::late}, at(11), events);
  alarms.reading({at(15), 1.0, 0.9, Flag::future}, at(11), events);
  CHECK(events.size() == 1);
  CHECK(alarms.is_open(AlarmKind::low_flow));
}

TEST_CASE("stale is raised by the clock tick and cleared by a fresh reading") {
  // after 30 min, watching since t=0. Reading at t=10 (clock 10).
  //   tick 39: silent 29 min, nothing | tick 40: silent 30 min: RAISE at 40, value 1800 s
  //   tick 50: already open | reading t=45 at clock 51: 6 min old (< 30): CLEAR at 51, 360 s
  AlarmsSpec spec;
  spec.stale_s = 1800.0;
  SiteAlarms alarms(spec, kT0);
  std::vector<AlarmEvent> events;
  alarms.reading({at(10), 1.0, 0.4, {}}, at(10), events);
  alarms.tick(at(39), events);
  CHECK(events.empty());
  alarms.tick(at(40), events);
  REQUIRE(events.size() == 1);
  CHECK(events[0].kind == AlarmKind::stale);
  CHECK(events[0].time_ms == at(40));
  CHECK(events[0].value == 1800.0);
  CHECK(events[0].threshold == 1800.0);
  alarms.tick(at(50), events);
  CHECK(events.size() == 1);
  alarms.reading({at(45), 1.0, 0.4, {}}, at(51), events);
  REQUIRE(events.size() == 2);
  CHECK(events[1].change == Change::cleared);
  CHECK(events[1].time_ms == at(51));
  CHECK(events[1].value == 360.0);
}

TEST_CASE("stale: a site that never reports is silent since watching began; old backlog keeps it") {
  // after 30 min, watching since t=0, no readings: tick 30 RAISES (1800 s). A reading of t=20
  // arriving at clock 60 is 40 min old: still stale, no clear.
  AlarmsSpec spec;
  spec.stale_s = 1800.0;
  SiteAlarms alarms(spec, kT0);
  std::vector<AlarmEvent> events;
  alarms.tick(at(29), events);
  CHECK(events.empty());
  alarms.tick(at(30), events);
  REQUIRE(events.size() == 1);
  alarms.reading({at(20), 1.0, 0.4, {}}, at(60), events);
  CHECK(events.size() == 1);
  CHECK(alarms.is_open(AlarmKind::stale));
}

TEST_CASE("rate of rise of stage across the window") {
  // rate 0.2 m/h, hysteresis 0.05 (clears below 0.15), window 1 h, hold 0. Stage every 15 min:
  //   t=0 1.00 | 15 1.00 | 30 1.02 (span 30 min = half the window: 0.04 m/h)
  //   45 1.05 (0.05 m in 0.75 h: 0.0667) | 60 1.10 (0.10 m/h)
  //   75 1.25 (oldest in window t=15 1.00: 0.25 m/h > 0.2: RAISE at 75, value 0.25)
  //   90 1.30 (from t=30 1.02: 0.28) | 105 1.30 (from 45 1.05: 0.25) | 120 1.30 (from 60: 0.20)
  //   135 1.30 (from 75 1.25: 0.05 < 0.15: CLEAR at 135, value 0.05)
  AlarmsSpec spec;
  spec.rising = {0.2, 0.05, 0.0};
  spec.rising_window_s = 3600.0;
  SiteAlarms alarms(spec, kT0);
  const double stages[] = {1.00, 1.00, 1.02, 1.05, 1.10, 1.25, 1.30, 1.30, 1.30, 1.30};
  std::vector<AlarmEvent> events;
  for (int i = 0; i < 10; ++i) {
    const auto t = at(15.0 * i);
    alarms.reading({t, stages[i], 0.5, {}}, t, events);
  }
  REQUIRE(events.size() == 2);
  CHECK(events[0].kind == AlarmKind::rising);
  CHECK(events[0].time_ms == at(75));
  CHECK(events[0].value == doctest::Approx(0.25));
  CHECK(events[0].threshold == 0.2);
  CHECK(events[1].change == Change::cleared);
  CHECK(events[1].time_ms == at(135));
  CHECK(events[1].value == doctest::Approx(0.05));
}

TEST_CASE("after a restart an open alarm stays open and is not raised again") {
  // below 0.5, hold 10 min: the first evaluator raises at t=15 (as in the first test). A second
  // one restored from the same readings, with the store saying low_flow is open, sees t=20 0.3
  // and raises nothing; t=25 0.7 clears it.
  const std::vector<std::optional<double>> before{0.8, 0.4, 0.45, 0.3};
  SiteAlarms first(low_flow(0.5, 0.1, 600.0), kT0);
  REQUIRE(feed(first, before).size() == 1);

  std::vector<AlarmReading> past;
  for (std::size_t i = 0; i < before.size(); ++i) past.push_back({at(5.0 * i), 1.0, before[i], {}});
  const AlarmKind open[] = {AlarmKind::low_flow};
  SiteAlarms restored(low_flow(0.5, 0.1, 600.0), kT0);
  restored.restore(past, open);
  CHECK(restored.is_open(AlarmKind::low_flow));
  const auto events = feed(restored, {0.3, 0.7}, 5.0, 20.0);
  REQUIRE(events.size() == 1);
  CHECK(events[0].change == Change::cleared);
  CHECK(events[0].time_ms == at(25));
}

TEST_CASE("the kind names are the view's contract") {
  CHECK(name(AlarmKind::low_flow) == "low_flow");
  CHECK(name(AlarmKind::high_flow) == "high_flow");
  CHECK(name(AlarmKind::stale) == "stale");
  CHECK(name(AlarmKind::rising) == "rising");
  CHECK(parse_kind("rising") == AlarmKind::rising);
  CHECK_FALSE(parse_kind("flood").has_value());
}

}  // namespace
}  // namespace stagewell::alarms
