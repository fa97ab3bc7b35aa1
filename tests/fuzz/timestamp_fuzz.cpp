// Timestamp text of any bytes: parse_timestamp (timestamp.hpp) in bounded time, and what it
// accepts must agree with itself. Checked on every input:
//  - text with an offset or 'Z' means one instant whatever local zone is given;
//  - that instant, written back as RFC 3339 text in UTC (both millisecond styles), reads back as
//    the same instant (RFC 3339, section 5.6: the written form is a valid date-time).
// A zone with daylight-saving changes exercises the gap and overlap rules.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "fuzz_support.hpp"
#include "stagewell/timestamp.hpp"

namespace {

using stagewell::Millis;
using stagewell::TimeZone;

const TimeZone& zone_with_dst() {
  static const TimeZone zone = [] {
    auto parsed = TimeZone::parse("America/Denver");
    if (!parsed) stagewell::fuzz::harness_failed(parsed.error().message);
    return *parsed;
  }();
  return zone;
}

void expect(bool holds, const char* what) {
  if (!holds) stagewell::fuzz::harness_failed(what);
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  static const TimeZone utc = TimeZone::utc();
  static const TimeZone fixed = *TimeZone::parse("+05:30");

  const auto absolute = stagewell::parse_timestamp(text, nullptr);
  const auto in_utc = stagewell::parse_timestamp(text, &utc);
  const auto in_fixed = stagewell::parse_timestamp(text, &fixed);
  const auto in_dst = stagewell::parse_timestamp(text, &zone_with_dst());
  // Any of these may fail; none may crash. Zone names are read as well.
  (void)TimeZone::parse(text);

  if (absolute) {
    expect(in_utc && *in_utc == *absolute, "an offset time read differently with a UTC zone");
    expect(in_fixed && *in_fixed == *absolute, "an offset time read differently with +05:30");
    expect(in_dst && *in_dst == *absolute, "an offset time read differently with a DST zone");
  }
  if (in_utc) {
    for (Millis style : {Millis::when_nonzero, Millis::always}) {
      const std::string written = stagewell::format_timestamp_utc(*in_utc, style);
      const auto again = stagewell::parse_timestamp(written, nullptr);
      expect(again && *again == *in_utc, "a formatted time did not read back as the same instant");
    }
  }
  return 0;
}
