// The alarm evaluator of one site (alarms.hpp). Pure: times come with the readings and ticks.
#include <algorithm>
#include <cmath>

#include "stagewell/alarms.hpp"

namespace stagewell::alarms {
namespace {

std::int64_t to_ms(double seconds) { return std::llround(seconds * 1000.0); }

constexpr double kMsPerHour = 3'600'000.0;

}  // namespace

void SiteAlarms::Threshold::step(AlarmKind kind, std::int64_t time_ms, double value,
                                 std::vector<AlarmEvent>& events) {
  if (!spec.threshold) return;
  const double level = *spec.threshold;
  if (open) {
    // The clear level lies `hysteresis` back inside the normal range: a value hovering at the
    // threshold neither clears nor raises again.
    const bool clears = above ? value < level - spec.hysteresis : value > level + spec.hysteresis;
    if (clears) {
      open = false;
      held_since_ms.reset();
      events.push_back({kind, AlarmEvent::Change::cleared, time_ms, value, level});
    }
    return;
  }
  const bool past = above ? value > level : value < level;
  if (!past) {
    held_since_ms.reset();  // the run is broken: the hold starts again
    return;
  }
  if (!held_since_ms) held_since_ms = time_ms;
  if (time_ms - *held_since_ms >= to_ms(spec.hold_s)) {
    open = true;
    held_since_ms.reset();
    events.push_back({kind, AlarmEvent::Change::raised, time_ms, value, level});
  }
}

void SiteAlarms::Threshold::set_open(bool now_open) {
  if (open != now_open) held_since_ms.reset();  // a run the store does not agree with
  open = now_open;
}

SiteAlarms::SiteAlarms(const AlarmsSpec& spec, std::int64_t started_ms)
    : low_{spec.low_flow, false, false, std::nullopt},
      high_{spec.high_flow, true, false, std::nullopt},
      rising_{spec.rising, true, false, std::nullopt},
      rising_window_ms_(to_ms(spec.rising_window_s)),
      started_ms_(started_ms) {
  if (spec.stale_s) stale_after_ms_ = to_ms(*spec.stale_s);
}

std::optional<double> SiteAlarms::rate_of_rise(std::int64_t time_ms, double stage) {
  window_.push_back({time_ms, stage});
  while (window_.front().time_ms < time_ms - rising_window_ms_) window_.pop_front();
  // The change across the window, from its oldest reading to this one. Less than half a window
  // of history (a start, or a gap) gives no rate: one step between two readings close together
  // is mostly noise.
  const std::int64_t span_ms = time_ms - window_.front().time_ms;
  if (span_ms <= 0 || 2 * span_ms < rising_window_ms_) return std::nullopt;
  return (stage - window_.front().stage) / (static_cast<double>(span_ms) / kMsPerHour);
}

void SiteAlarms::reading(const AlarmReading& reading, std::int64_t now_ms,
                         std::vector<AlarmEvent>& events) {
  if (reading.flags.has(Flag::future)) return;
  if (newest_ms_ && reading.time_ms <= *newest_ms_) return;  // late: see alarms.hpp
  newest_ms_ = reading.time_ms;

  if (stale_after_ms_ && stale_open_ && now_ms - reading.time_ms < *stale_after_ms_) {
    stale_open_ = false;
    events.push_back({AlarmKind::stale, AlarmEvent::Change::cleared, now_ms,
                      static_cast<double>(now_ms - reading.time_ms) / 1000.0,
                      static_cast<double>(*stale_after_ms_) / 1000.0});
  }
  if (reading.discharge) {
    low_.step(AlarmKind::low_flow, reading.time_ms, *reading.discharge, events);
    high_.step(AlarmKind::high_flow, reading.time_ms, *reading.discharge, events);
  }
  if (rising_.spec.threshold && !reading.flags.has(Flag::out_of_range)) {
    if (const auto rate = rate_of_rise(reading.time_ms, reading.stage)) {
      rising_.step(AlarmKind::rising, reading.time_ms, *rate, events);
    }
  }
}

void SiteAlarms::tick(std::int64_t now_ms, std::vector<AlarmEvent>& events) {
  if (!stale_after_ms_ || stale_open_) return;
  const std::int64_t silent_ms = now_ms - newest_ms_.value_or(started_ms_);
  if (silent_ms < *stale_after_ms_) return;
  stale_open_ = true;
  events.push_back({AlarmKind::stale, AlarmEvent::Change::raised, now_ms,
                    static_cast<double>(silent_ms) / 1000.0,
                    static_cast<double>(*stale_after_ms_) / 1000.0});
}

void SiteAlarms::restore(std::span<const AlarmReading> past, std::span<const AlarmKind> open) {
  std::vector<AlarmEvent> ignored;
  // The clock of the replay is each reading's own time: nothing there is stale.
  for (const auto& earlier : past) this->reading(earlier, earlier.time_ms, ignored);
  const auto is = [&](AlarmKind kind) { return std::ranges::find(open, kind) != open.end(); };
  low_.set_open(is(AlarmKind::low_flow));
  high_.set_open(is(AlarmKind::high_flow));
  rising_.set_open(is(AlarmKind::rising));
  stale_open_ = is(AlarmKind::stale);
}

bool SiteAlarms::is_open(AlarmKind kind) const {
  switch (kind) {
    case AlarmKind::low_flow:
      return low_.open;
    case AlarmKind::high_flow:
      return high_.open;
    case AlarmKind::stale:
      return stale_open_;
    case AlarmKind::rising:
      return rising_.open;
  }
  return false;
}

}  // namespace stagewell::alarms
