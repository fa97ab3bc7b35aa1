// parse_duration and fixed_utc_offset_s. Expected values follow from the definitions
// 1 min = 60 s, 1 h = 3600 s, 1 d = 86 400 s (SI brochure, units accepted for use with the SI),
// and from the RFC 3339 offset form "+HH:MM" (offset = sign * (HH * 3600 + MM * 60) s).
#include <doctest/doctest.h>

#include "stagewell/config.hpp"

using stagewell::fixed_utc_offset_s;
using stagewell::parse_duration;

TEST_CASE("durations in each unit and in combination") {
  CHECK(parse_duration("90s") == 90.0);
  CHECK(parse_duration("15m") == 15 * 60.0);
  CHECK(parse_duration("2h") == 2 * 3600.0);
  CHECK(parse_duration("1d") == 86400.0);
  CHECK(parse_duration("1h30m") == 3600.0 + 30 * 60.0);
  CHECK(parse_duration("1d2h3m4s") == 86400.0 + 2 * 3600.0 + 3 * 60.0 + 4.0);
  CHECK(parse_duration("1.5h") == 5400.0);
  CHECK(parse_duration("0") == 0.0);
  CHECK(parse_duration("0s") == 0.0);
}

TEST_CASE("malformed or negative durations are refused") {
  for (const char* text : {"", "5", "-5m", "5x", "h", "1 h", "6 hours", "5ms", "30m1h", "1h1h",
                           "1h30", "+5m", "1e3s", "..5s"}) {
    CAPTURE(text);
    CHECK_FALSE(parse_duration(text).has_value());
  }
}

TEST_CASE("fixed UTC offsets") {
  CHECK(fixed_utc_offset_s("Z") == 0);
  CHECK(fixed_utc_offset_s("+00:00") == 0);
  CHECK(fixed_utc_offset_s("-07:00") == -7 * 3600);
  CHECK(fixed_utc_offset_s("+05:30") == 5 * 3600 + 30 * 60);
  CHECK(fixed_utc_offset_s("+14:00") == 14 * 3600);
  CHECK(fixed_utc_offset_s("-12:00") == -12 * 3600);
  for (const char* text : {"UTC", "America/Denver", "+15:00", "-12:30", "7:00", "+7:00", "+07:60",
                           "+0700", "-07", "z", ""}) {
    CAPTURE(text);
    CHECK_FALSE(fixed_utc_offset_s(text).has_value());
  }
}
