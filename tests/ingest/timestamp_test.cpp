// Timestamps. Expected instants were computed independently with Debian's /usr/bin/python3 3.11
// (datetime.fromisoformat, zoneinfo.ZoneInfo over the system tzdata), as milliseconds since the
// epoch: (dt - datetime(1970,1,1,tzinfo=timezone.utc)) in ms, microseconds truncated.
#include "stagewell/timestamp.hpp"

#include <doctest/doctest.h>

#include <string>

namespace stagewell {
namespace {

std::int64_t utc_ms(std::string_view text) {
  auto parsed = parse_timestamp(text, nullptr);
  REQUIRE_MESSAGE(parsed.has_value(), std::string(text) << ": " << parsed.error().message);
  return *parsed;
}

std::int64_t local_ms(std::string_view text, const TimeZone& zone) {
  auto parsed = parse_timestamp(text, &zone);
  REQUIRE_MESSAGE(parsed.has_value(), std::string(text) << ": " << parsed.error().message);
  return *parsed;
}

std::string error_of(std::string_view text, const TimeZone* zone = nullptr) {
  auto parsed = parse_timestamp(text, zone);
  REQUIRE_MESSAGE(!parsed.has_value(), std::string(text) << " parsed as " << *parsed);
  CHECK(parsed.error().kind == ErrorKind::parse);
  return parsed.error().message;
}

TimeZone zone(std::string_view name) {
  auto parsed = TimeZone::parse(name);
  REQUIRE_MESSAGE(parsed.has_value(), parsed.error().message);
  return *parsed;
}

TEST_CASE("UTC and offset timestamps (python datetime.fromisoformat)") {
  CHECK(utc_ms("2026-03-01T06:15:00Z") == 1772345700000);
  CHECK(utc_ms("2026-03-01T06:15:00.250-07:00") == 1772370900250);
  CHECK(utc_ms("2026-03-01T06:15:00+05:30") == 1772325900000);
  CHECK(utc_ms("2026-03-01T06:15:00+05:00") == 1772327700000);
  CHECK(utc_ms("1969-12-31T23:59:59.500Z") == -500);
  CHECK(utc_ms("2024-02-29T12:00:00Z") == 1709208000000);  // leap year
  CHECK(utc_ms("2000-02-29T00:00:00Z") == 951782400000);   // divisible by 400: leap
}

TEST_CASE("ISO 8601 spellings accepted beside RFC 3339 (definition, see timestamp.hpp)") {
  const std::int64_t expected = 1772345700000;  // 2026-03-01T06:15:00Z, python
  CHECK(utc_ms("2026-03-01 06:15:00Z") == expected);
  CHECK(utc_ms("2026-03-01t06:15:00z") == expected);
  CHECK(utc_ms("2026-03-01T06:15Z") == expected);
  CHECK(utc_ms("2026-03-01T06:15:00+00:00") == expected);
  CHECK(utc_ms("2026-03-01T11:45:00+0530") == expected);
  CHECK(utc_ms("2026-03-01T11:15:00+05") == expected);
  CHECK(utc_ms("2026-03-01T06:15:00,000Z") == expected);
}

TEST_CASE("fractions past milliseconds are truncated (python: microseconds // 1000)") {
  CHECK(utc_ms("2026-03-01T06:15:00.123456Z") == 1772345700123);
  CHECK(utc_ms("2026-12-31T23:59:59.9999Z") == 1798761599999);
  CHECK(utc_ms("2026-03-01T06:15:00.5Z") == 1772345700500);
}

TEST_CASE("local time with no zone is rejected") {
  const std::string message = error_of("2026-03-01T06:15:00");
  CHECK(message.find("timestamp has no UTC offset and the source has no time_zone") !=
        std::string::npos);
}

TEST_CASE("malformed timestamps say what is wrong and what is expected") {
  const auto says = [](std::string_view text, std::string_view part) {
    const std::string message = error_of(text);
    CHECK_MESSAGE(message.find(part) != std::string::npos, text << " -> " << message);
    CHECK_MESSAGE(message.find("expected a timestamp like") != std::string::npos, message);
  };
  says("", "empty");
  says("2026/03/01 06:15:00Z", "YYYY-MM-DD");
  says("2026-03-01", "no time of day");
  says("2026-03-01X06:15:00Z", "'T' or a space");
  says("2026-03-01T6:15:00Z", "HH:MM:SS");
  says("2026-13-01T06:15:00Z", "month 13");
  says("2026-00-01T06:15:00Z", "month 00");
  says("2026-02-29T06:15:00Z", "day 29 does not exist in 2026-02");  // python: ValueError
  says("1900-02-29T06:15:00Z", "day 29 does not exist in 1900-02");  // python: ValueError
  says("2026-04-31T06:15:00Z", "day 31 does not exist in 2026-04");  // python: ValueError
  says("2026-03-01T24:00:00Z", "hour 24");
  says("2026-03-01T06:60:00Z", "minute 60");
  says("2026-03-01T06:15:60Z", "leap seconds");
  says("2026-03-01T06:15:61Z", "second 61");
  says("2026-03-01T06:15:00.Z", "decimal point");
  says("2026-03-01T06:15:00+25:00", "out of range");
  says("2026-03-01T06:15:00+7", "UTC offset must be");
  says("2026-03-01T06:15:00Z junk", "after the UTC offset");
  says("2026-03-01T06:15:00 PST", "after the time of day");
}

TEST_CASE("local times in America/Denver across both 2026 US DST changes (python zoneinfo)") {
  const TimeZone denver = zone("America/Denver");
  // Spring forward, 2026-03-08 02:00 MST -> 03:00 MDT.
  CHECK(local_ms("2026-03-08 01:59:59", denver) == 1772960399000);  // MST, -07:00
  CHECK(local_ms("2026-03-08T03:00:00", denver) == 1772960400000);  // MDT, -06:00
  // 02:30 never happened: python's round trip through UTC does not give 02:30 back.
  const std::string gap = error_of("2026-03-08 02:30:00", &denver);
  CHECK(gap.find("does not exist in America/Denver") != std::string::npos);
  // Fall back, 2026-11-01 02:00 MDT -> 01:00 MST: 01:30 happens twice; the earlier one
  // (python fold=0, -06:00) is chosen.
  CHECK(local_ms("2026-11-01 00:59:59", denver) == 1793516399000);
  CHECK(local_ms("2026-11-01 01:30:00", denver) == 1793518200000);  // not 1793521800000 (fold=1)
  CHECK(local_ms("2026-11-01 02:00:00", denver) == 1793523600000);
  CHECK(local_ms("2026-07-01 12:00:00", denver) == 1782928800000);
  CHECK(local_ms("2026-01-15 12:00:00", denver) == 1768503600000);
  // An explicit offset wins over the source's zone.
  CHECK(local_ms("2026-11-01T01:30:00-07:00", denver) == 1793521800000);
}

TEST_CASE("local times in America/New_York at the 2026 DST changes (python zoneinfo)") {
  const TimeZone new_york = zone("America/New_York");
  error_of("2026-03-08 02:15:00", &new_york);  // skipped
  CHECK(local_ms("2026-03-08 03:15:00", new_york) == 1772954100000);
  CHECK(local_ms("2026-11-01 01:15:00", new_york) == 1793510100000);  // fold=0, EDT
}

TEST_CASE("fixed-offset source zones") {
  CHECK(local_ms("2026-03-01 06:15:00.250", zone("-07:00")) == 1772370900250);  // python, above
  CHECK(local_ms("2026-03-01 06:15:00", zone("+05:30")) == 1772325900000);
  CHECK(local_ms("2026-03-01 06:15:00", zone("UTC")) == 1772345700000);
  CHECK(local_ms("2026-03-01 06:15:00", zone("Z")) == 1772345700000);
}

TEST_CASE("unknown or machine-dependent zone names are errors") {
  auto unknown = TimeZone::parse("Mars/Olympus_Mons");
  REQUIRE_FALSE(unknown.has_value());
  CHECK(unknown.error().kind == ErrorKind::not_found);
  CHECK(unknown.error().message.find("IANA") != std::string::npos);
  CHECK_FALSE(TimeZone::parse("localtime").has_value());
  CHECK_FALSE(TimeZone::parse("/etc/localtime").has_value());
  CHECK_FALSE(TimeZone::parse("").has_value());
  CHECK_FALSE(TimeZone::parse("+24:00").has_value());
  CHECK_FALSE(TimeZone::parse("+7").has_value());
}

TEST_CASE("formatting milliseconds as RFC 3339 UTC (python datetime + timedelta)") {
  CHECK(format_timestamp_utc(0) == "1970-01-01T00:00:00Z");
  CHECK(format_timestamp_utc(1772345700000) == "2026-03-01T06:15:00Z");
  CHECK(format_timestamp_utc(1772345700250) == "2026-03-01T06:15:00.250Z");
  CHECK(format_timestamp_utc(-500) == "1969-12-31T23:59:59.500Z");
  CHECK(format_timestamp_utc(-1) == "1969-12-31T23:59:59.999Z");
  // RFC 3339 (section 5.6, date-fullyear = 4DIGIT): years before 1000 keep four digits, so a
  // stray year-26 reading prints as text that reads back.
  CHECK(format_timestamp_utc(-61318152013000) == "0026-11-27T03:59:47Z");
  CHECK(parse_timestamp("0026-11-27T03:59:47Z", nullptr).value() == -61318152013000);
  CHECK(format_timestamp_utc(1709208000000) == "2024-02-29T12:00:00Z");
  CHECK(format_timestamp_utc(253402300799999) == "9999-12-31T23:59:59.999Z");
  CHECK(format_timestamp_utc(1772345700000, Millis::always) == "2026-03-01T06:15:00.000Z");
}

TEST_CASE("an offset cannot carry a time out of the years RFC 3339 text can write (found by fuzzing)") {
  // RFC 3339, section 5.6: date-fullyear = 4DIGIT. Python: datetime(9999, 12, 31, 23, 59, 59,
  // 999000, tzinfo=timezone(-timedelta(hours=23, minutes=59))) is year 10000 in UTC.
  CHECK(error_of("9999-12-31T23:59:59.999-23:59").find("outside years 0000-9999") !=
        std::string::npos);
  CHECK(error_of("0000-01-01T00:00:00+00:01").find("outside years 0000-9999") !=
        std::string::npos);
  // The first and last instants still read, and write back as the same text.
  CHECK(format_timestamp_utc(utc_ms("0000-01-01T00:00:00Z")) == "0000-01-01T00:00:00Z");
  CHECK(utc_ms("0000-01-01T00:00:00Z") == -62'167'219'200'000);
  CHECK(utc_ms("9999-12-31T23:59:59.999Z") == 253'402'300'799'999);
  CHECK(utc_ms("9999-12-31T23:00:00-00:59") == 253'402'300'740'000);
}

}  // namespace
}  // namespace stagewell
