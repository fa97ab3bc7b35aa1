// Alarm events as the store keeps them (schema/003_alarms.sql) and hands them to the alarms
// module, the page and the metrics. What each kind compares, and in which unit, is in alarms.hpp.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

namespace stagewell::alarms {

// The names are the `kind` column of the `alarms` view: never rename one.
enum class AlarmKind { low_flow, high_flow, stale, rising };
std::string_view name(AlarmKind kind);
std::optional<AlarmKind> parse_kind(std::string_view text);

// An alarm raised or cleared.
struct AlarmEvent {
  enum class Change { raised, cleared };
  AlarmKind kind = AlarmKind::low_flow;
  Change change = Change::raised;
  std::int64_t time_ms = 0;  // when: a reading's time, or the clock at a tick (stale)
  double value = 0.0;        // the value that raised (or cleared) it; unit: see alarms.hpp
  double threshold = 0.0;    // the configured level it was compared with (below/above/after/rate)
};

// An alarm as stored (the `alarms` view's row).
struct AlarmRecord {
  std::string site;
  AlarmKind kind = AlarmKind::low_flow;
  std::int64_t raised_ms = 0;
  std::optional<std::int64_t> cleared_ms;  // empty while open
  double value = 0.0;
  double threshold = 0.0;
};

// Whether a site has an alarm of a kind open now (one row per site and kind ever raised).
struct AlarmState {
  std::string site;
  AlarmKind kind = AlarmKind::low_flow;
  bool open = false;
};

}  // namespace stagewell::alarms
