// Timestamp text <-> milliseconds. The fields are read by hand so that each mistake gets its own
// message; everything calendrical (month lengths, leap years, zone rules) is left to cctz.
#include "stagewell/timestamp.hpp"

#include <cctz/civil_time.h>
#include <cctz/time_zone.h>

#include <chrono>
#include <optional>

namespace stagewell {
namespace {

constexpr std::string_view kExpected =
    "expected a timestamp like 2026-03-01T06:15:00Z, 2026-03-01T06:15:00.250-07:00 or "
    "2026-03-01 06:15:00";

// Reads fixed-width decimal fields left to right.
class Cursor {
 public:
  explicit Cursor(std::string_view text) : text_(text) {}

  bool done() const { return pos_ >= text_.size(); }
  char peek() const { return done() ? '\0' : text_[pos_]; }
  std::string_view rest() const { return text_.substr(pos_); }
  void skip() { ++pos_; }

  bool take(char c) {
    if (peek() != c) return false;
    ++pos_;
    return true;
  }

  // Exactly `width` digits -> value; nullopt (and nothing consumed) otherwise.
  std::optional<int> digits(int width) {
    if (pos_ + static_cast<std::size_t>(width) > text_.size()) return std::nullopt;
    int value = 0;
    for (int i = 0; i < width; ++i) {
      const char c = text_[pos_ + static_cast<std::size_t>(i)];
      if (c < '0' || c > '9') return std::nullopt;
      value = value * 10 + (c - '0');
    }
    pos_ += static_cast<std::size_t>(width);
    return value;
  }

 private:
  std::string_view text_;
  std::size_t pos_ = 0;
};

// The instants that RFC 3339 text in UTC can write: 0000-01-01T00:00:00Z to 9999-12-31T23:59:59Z
// (seconds since the epoch; Python: datetime(1, 1, 1) - 366 days for year 0, and
// datetime(9999, 12, 31, 23, 59, 59) in UTC).
constexpr std::int64_t kFirstSecond = -62'167'219'200;
constexpr std::int64_t kLastSecond = 253'402'300'799;

std::unexpected<Error> bad(std::string what) {
  return fail(ErrorKind::parse, what + "; " + std::string(kExpected));
}

std::string two(int value) {
  std::string text = std::to_string(value);
  return value < 10 ? "0" + text : text;
}

// The offset part after the time: "Z", "+HH:MM", "+HHMM", "+HH" -> seconds east of UTC.
Result<int> parse_offset_s(Cursor& in) {
  if (in.take('Z') || in.take('z')) return 0;
  const char sign = in.peek();
  in.skip();
  const auto hours = in.digits(2);
  if (!hours) return bad("the UTC offset must be Z or +HH:MM / -HH:MM");
  int minutes = 0;
  if (!in.done()) {
    in.take(':');  // +HH:MM and +HHMM are both ISO 8601
    const auto mm = in.digits(2);
    if (!mm) return bad("the UTC offset must be Z or +HH:MM / -HH:MM");
    minutes = *mm;
  }
  if (*hours > 23 || minutes > 59) {
    return bad("UTC offset " + std::string(1, sign) + two(*hours) + ":" + two(minutes) +
               " is out of range");
  }
  const int seconds = (*hours * 60 + minutes) * 60;
  return sign == '-' ? -seconds : seconds;
}

}  // namespace

Result<std::int64_t> parse_timestamp(std::string_view text, const TimeZone* local_zone) {
  if (text.empty()) return bad("the time is empty");
  Cursor in(text);

  const auto year = in.digits(4);
  const bool date_ok = year.has_value() && in.take('-');
  const auto month = date_ok ? in.digits(2) : std::nullopt;
  const auto day = month && in.take('-') ? in.digits(2) : std::nullopt;
  if (!day) return bad("the date must be YYYY-MM-DD");
  if (in.done()) return bad("there is a date but no time of day");
  if (!in.take('T') && !in.take('t') && !in.take(' ')) {
    return bad("the date must be followed by 'T' or a space and the time of day");
  }

  const auto hour = in.digits(2);
  const auto minute = hour && in.take(':') ? in.digits(2) : std::nullopt;
  if (!minute) return bad("the time of day must be HH:MM:SS");
  int second = 0;
  if (in.take(':')) {
    const auto ss = in.digits(2);
    if (!ss) return bad("the seconds must be two digits");
    second = *ss;
  }
  int millis = 0;
  if (in.take('.') || in.take(',')) {
    int count = 0;
    while (in.peek() >= '0' && in.peek() <= '9') {
      // Only the first three digits matter: later ones are truncated.
      if (count < 3) millis = millis * 10 + (in.peek() - '0');
      ++count;
      in.skip();
    }
    if (count == 0) return bad("a decimal point must be followed by digits");
    for (; count < 3; ++count) millis *= 10;
  }

  if (*month < 1 || *month > 12) return bad("month " + two(*month) + " is not 01-12");
  if (*hour > 23) return bad("hour " + two(*hour) + " is not 00-23");
  if (*minute > 59) return bad("minute " + two(*minute) + " is not 00-59");
  if (second == 60) return bad("leap seconds (:60) are not accepted");
  if (second > 59) return bad("second " + two(second) + " is not 00-59");
  // The proleptic Gregorian calendar of <chrono>: ok() is false for a day the month does not have.
  const std::chrono::year_month_day date{std::chrono::year(*year),
                                         std::chrono::month(static_cast<unsigned>(*month)),
                                         std::chrono::day(static_cast<unsigned>(*day))};
  if (!date.ok()) {
    return bad("day " + two(*day) + " does not exist in " + std::to_string(*year) + "-" +
               two(*month));
  }
  const std::int64_t time_of_day_s = (*hour * 60 + *minute) * 60 + second;

  std::int64_t seconds = 0;
  if (in.done()) {
    if (local_zone == nullptr) {
      return fail(ErrorKind::parse,
                  "timestamp has no UTC offset and the source has no time_zone; write it with Z "
                  "or an offset such as -07:00, or set time_zone for the source");
    }
    const cctz::civil_second civil(*year, *month, *day, *hour, *minute, second);
    const auto lookup = local_zone->cctz_zone().lookup(civil);
    if (lookup.kind == cctz::time_zone::civil_lookup::SKIPPED) {
      return fail(ErrorKind::parse, "local time does not exist in " + local_zone->name() +
                                        " (skipped by a daylight-saving change)");
    }
    // UNIQUE: pre == post. REPEATED (the autumn overlap): pre is the earlier instant.
    seconds = lookup.pre.time_since_epoch().count();
  } else {
    const char next = in.peek();
    if (next != 'Z' && next != 'z' && next != '+' && next != '-') {
      return bad("unexpected text '" + std::string(in.rest()) + "' after the time of day");
    }
    const auto offset_s = parse_offset_s(in);
    if (!offset_s) return std::unexpected(offset_s.error());
    if (!in.done()) {
      return bad("unexpected text '" + std::string(in.rest()) + "' after the UTC offset");
    }
    // With an offset no zone rules are needed: days since the epoch, then the time of day. (The
    // hot path of ingest: cheaper than a cctz conversion through the UTC zone.)
    const std::int64_t days = std::chrono::sys_days(date).time_since_epoch().count();
    seconds = days * 86'400 + time_of_day_s - *offset_s;
  }
  // An offset or a zone can carry a time written in year 0000 or 9999 out of those years; the
  // instant must still be writable as RFC 3339 text in UTC (four-digit years), as it is stored.
  if (seconds < kFirstSecond || seconds > kLastSecond) {
    return bad("the time is outside years 0000-9999 in UTC");
  }
  return seconds * 1000 + millis;
}

std::string format_timestamp_utc(std::int64_t time_ms, Millis millis) {
  using Ms = std::chrono::milliseconds;
  const std::chrono::time_point<std::chrono::system_clock, Ms> instant{Ms(time_ms)};
  const bool whole_second = time_ms % 1000 == 0;
  // %E4Y: RFC 3339 wants four digits, so year 26 is "0026" (and reads back).
  const char* format = (millis == Millis::when_nonzero && whole_second) ? "%E4Y-%m-%dT%H:%M:%SZ"
                                                                        : "%E4Y-%m-%dT%H:%M:%E3SZ";
  return cctz::format(format, instant, cctz::utc_time_zone());
}

std::int64_t system_now_ms() {
  using namespace std::chrono;
  return duration_cast<milliseconds>(system_clock::now().time_since_epoch()).count();
}

}  // namespace stagewell
