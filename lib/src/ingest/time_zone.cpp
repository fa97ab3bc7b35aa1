// TimeZone: IANA names come from the system's zoneinfo through cctz; fixed offsets are parsed here
// because cctz spells them differently ("Fixed/UTC+05:30:00").
#include <cctz/time_zone.h>

#include <chrono>
#include <optional>

#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

bool is_digit(char c) { return c >= '0' && c <= '9'; }

// "+HH:MM" / "-HH:MM" -> seconds east of UTC; nullopt when the text is not of that shape.
std::optional<int> parse_fixed_offset_s(std::string_view text) {
  if (text.size() != 6 || (text[0] != '+' && text[0] != '-') || text[3] != ':') return std::nullopt;
  if (!is_digit(text[1]) || !is_digit(text[2]) || !is_digit(text[4]) || !is_digit(text[5])) {
    return std::nullopt;
  }
  const int hours = (text[1] - '0') * 10 + (text[2] - '0');
  const int minutes = (text[4] - '0') * 10 + (text[5] - '0');
  if (hours > 23 || minutes > 59) return std::nullopt;
  const int seconds = (hours * 60 + minutes) * 60;
  return text[0] == '-' ? -seconds : seconds;
}

bool is_utc_name(std::string_view text) {
  return text == "Z" || text == "z" || text == "UTC" || text == "utc";
}

}  // namespace

TimeZone TimeZone::utc() { return TimeZone(cctz::utc_time_zone(), "UTC"); }

Result<TimeZone> TimeZone::parse(std::string_view name) {
  const std::string expected =
      "expected an IANA time zone name such as America/Denver, or +HH:MM, -HH:MM, Z or UTC";
  if (is_utc_name(name)) return TimeZone(cctz::utc_time_zone(), std::string(name));
  if (auto offset_s = parse_fixed_offset_s(name)) {
    return TimeZone(cctz::fixed_time_zone(std::chrono::seconds(*offset_s)), std::string(name));
  }
  // cctz would also read "localtime" (whatever the machine says) and absolute file paths; neither
  // is a zone name, and the first would make results depend on the host.
  if (name.empty() || name == "localtime" || name.front() == '/' ||
      name.find("..") != std::string_view::npos) {
    return fail(ErrorKind::invalid_argument,
                "time zone '" + std::string(name) + "' is not allowed: " + expected);
  }
  cctz::time_zone zone;
  if (!cctz::load_time_zone(std::string(name), &zone)) {
    return fail(ErrorKind::not_found, "unknown time zone '" + std::string(name) + "': " + expected);
  }
  return TimeZone(zone, std::string(name));
}

}  // namespace stagewell
