// Timestamps of readings: text -> milliseconds since 1970-01-01T00:00:00Z and back.
//
// Accepted text (RFC 3339, plus the common ISO 8601 relaxations):
//
// clang-format off
//   2026-03-01T06:15:00Z             UTC
//   2026-03-01T06:15:00.250-07:00    with an offset; 't' or ' ' may replace 'T', 'z' may replace 'Z'
//   2026-03-01 06:15:00+0530         offset also as +HHMM or +HH
//   2026-03-01 06:15                 seconds may be left out
//   2026-03-01 06:15:00              no offset: local time in the source's time zone
// clang-format on
//
// A fraction of a second (after '.' or ',') may have any number of digits; digits past
// milliseconds are dropped (truncated toward the earlier instant). Leap seconds (:60) are rejected.
//
// Local times (no offset) need a TimeZone. Where a daylight-saving change makes a local time occur
// twice (the autumn overlap) the EARLIER instant is taken, i.e. the one with the offset in force
// before the change. A local time that never occurs (the spring gap) is rejected.
#pragma once

#include <cctz/time_zone.h>

#include <cstdint>
#include <string>
#include <string_view>
#include <utility>

#include "stagewell/result.hpp"

namespace stagewell {

// The time zone of a source or of the daily figures: an IANA name or a fixed offset.
// Copyable and cheap (cctz shares the loaded zone data).
class TimeZone {
 public:
  // "America/Denver" (from the system's zoneinfo), "+HH:MM", "-HH:MM", "Z" or "UTC".
  // Fails with not_found for an unknown name.
  static Result<TimeZone> parse(std::string_view name);
  static TimeZone utc();

  const std::string& name() const { return name_; }  // as given
  const cctz::time_zone& cctz_zone() const { return zone_; }

 private:
  TimeZone(cctz::time_zone zone, std::string name) : zone_(zone), name_(std::move(name)) {}

  cctz::time_zone zone_;
  std::string name_;
};

// Parses a timestamp (see the top of this file). `local_zone` is used for text without an offset;
// nullptr means the source has none, and such text is an error. The error message says what was
// wrong and what was expected; it does not repeat the text.
Result<std::int64_t> parse_timestamp(std::string_view text, const TimeZone* local_zone);

enum class Millis {
  when_nonzero,  // 2026-03-01T06:15:00Z, 2026-03-01T06:15:00.250Z
  always,        // 2026-03-01T06:15:00.000Z: fixed width, sorts as text
};

// RFC 3339 text in UTC for milliseconds since the epoch (negative values are before 1970).
std::string format_timestamp_utc(std::int64_t time_ms, Millis millis = Millis::when_nonzero);

// The system clock in milliseconds since the epoch: the default "now" for the checks.
std::int64_t system_now_ms();

}  // namespace stagewell
