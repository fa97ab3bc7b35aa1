// The gaugings CSV parser: header by name in any order, optional columns, and each bad line refused
// with its line number and what is wrong. Times per RFC 3339 section 5.6 (an offset is required);
// expected instants worked out by hand from the calendar.
#include "stagewell/gauging_csv.hpp"

#include <doctest/doctest.h>

#include <string>

namespace stagewell {
namespace {

GaugingCsvOptions options(double factor = 1.0) {
  return {.known_site = [](std::string_view id) { return id == "weir-1" || id == "canal-2"; },
          .discharge_factor = factor};
}

GaugingsCsv parsed(std::string_view text, double factor = 1.0) {
  auto result = parse_gaugings_csv(text, options(factor));
  REQUIRE_MESSAGE(result.has_value(), result.error().message);
  return *result;
}

// 2026-05-04T10:30:00Z: 20577 days after 1970-01-01 (56 years with 14 leap days to 2026-01-01 =
// 20454 days, then 31+28+31+30+3 = 123 days), plus 10.5 hours.
constexpr std::int64_t kMay4At1030 = (20577LL * 86400 + 10 * 3600 + 30 * 60) * 1000;

TEST_CASE("columns by name, in any order, optional ones absent or empty") {
  const auto out = parsed(
      "# field sheet\n"
      "Discharge , time,SITE,note\n"
      "2.5,2026-05-04T10:30:00Z,weir-1,\"wading, left bank\"\n"
      "\n"
      "0,2026-05-04T12:30:00+02:00,canal-2,\n");
  REQUIRE(out.errors.empty());
  REQUIRE(out.gaugings.size() == 2);
  const auto& first = out.gaugings[0];
  CHECK(first.line_number == 3);
  CHECK(first.site == "weir-1");
  CHECK(first.time_ms == kMay4At1030);
  CHECK(first.discharge == 2.5);
  CHECK_FALSE(first.stage.has_value());
  CHECK_FALSE(first.uncertainty.has_value());
  CHECK_FALSE(first.method.has_value());
  CHECK(first.note == "wading, left bank");
  CHECK(out.gaugings[1].line_number == 5);
  CHECK(out.gaugings[1].time_ms == kMay4At1030);  // 12:30 at +02:00 is 10:30 UTC
  CHECK(out.gaugings[1].discharge == 0.0);
  CHECK_FALSE(out.gaugings[1].note.has_value());
}

TEST_CASE("every column, and the discharge converted by the caller's factor") {
  const auto out = parsed(
      "site,time,discharge,stage,method,uncertainty,note\n"
      "weir-1,2026-05-04T10:30:00Z,250,1.25,current meter,7.5%,after rain\n"
      "weir-1,2026-05-04T11:30:00Z,100,,acoustic,100,\n",
      0.001);
  REQUIRE(out.errors.empty());
  REQUIRE(out.gaugings.size() == 2);
  CHECK(out.gaugings[0].discharge == doctest::Approx(0.25).epsilon(1e-15));  // 250 L/s
  CHECK(out.gaugings[0].stage == 1.25);
  CHECK(out.gaugings[0].method == "current meter");
  CHECK(out.gaugings[0].uncertainty == 7.5);
  CHECK_FALSE(out.gaugings[1].stage.has_value());
  CHECK(out.gaugings[1].uncertainty == 100.0);
}

TEST_CASE("bad lines are refused one by one, naming the line and the problem") {
  const auto out = parsed(
      "site,time,discharge,stage,uncertainty\n"
      "river-x,2026-05-04T10:30:00Z,1.0,,\n"     // 2 unknown site
      "weir-1,2026-05-04 10:30:00,1.0,,\n"       // 3 no offset
      "weir-1,2026-13-04T10:30:00Z,1.0,,\n"      // 4 no such month
      "weir-1,2026-05-04T10:30:00Z,-0.5,,\n"     // 5 negative
      "weir-1,2026-05-04T10:30:00Z,lots,,\n"     // 6 not a number
      "weir-1,2026-05-04T10:30:00Z,\"1,5\",,\n"  // 7 decimal comma
      "weir-1,2026-05-04T10:30:00Z,1.0,,0\n"     // 8 uncertainty 0
      "weir-1,2026-05-04T10:30:00Z,1.0,,150\n"   // 9 uncertainty above 100
      "weir-1,2026-05-04T10:30:00Z,1.0\n"        // 10 too few fields
      "weir-1,2026-05-04T10:30:00Z,nan,,\n"      // 11 not finite
      "weir-1,2026-05-04T10:30:00Z,1.0,high,\n"  // 12 stage not a number
      "weir-1,2026-05-04T10:30:00Z,,,\n"         // 13 discharge empty
      ",2026-05-04T10:30:00Z,1.0,,\n"            // 14 site empty
      "weir-1,2026-05-04T10:30:00Z,1.0,,5\n");   // 15 good
  REQUIRE(out.gaugings.size() == 1);
  CHECK(out.gaugings[0].line_number == 15);
  REQUIRE(out.errors.size() == 13);
  const auto error = [&](std::size_t i, std::int64_t line, std::string_view part) {
    CAPTURE(out.errors[i].reason);
    CHECK(out.errors[i].line_number == line);
    CHECK(out.errors[i].reason.find(part) != std::string::npos);
  };
  error(0, 2, "unknown site 'river-x'");
  error(1, 3, "time '2026-05-04 10:30:00'");
  error(2, 4, "time '2026-13-04T10:30:00Z'");
  error(3, 5, "discharge '-0.5' is negative");
  error(4, 6, "discharge 'lots' is not a finite number");
  error(5, 7, "use '.' as the decimal point");
  error(6, 8, "uncertainty '0' must be a percentage greater than 0 and at most 100");
  error(7, 9, "uncertainty '150'");
  error(8, 10, "3 fields, but the header has 5");
  error(9, 11, "discharge 'nan' is not a finite number");
  error(10, 12, "stage 'high' is not a finite number");
  error(11, 13, "the discharge is empty");
  error(12, 14, "the site is empty");
}

TEST_CASE("a header that cannot be used refuses the whole file") {
  const auto refused = [](std::string_view text, std::string_view part) {
    auto result = parse_gaugings_csv(text, options());
    REQUIRE_FALSE(result.has_value());
    CAPTURE(result.error().message);
    CHECK(result.error().message.find(part) != std::string::npos);
  };
  refused("site,time,flow\nweir-1,2026-05-04T10:30:00Z,1\n", "unknown column 'flow'");
  refused("site,time\n", "no 'discharge' column");
  refused("site,time,discharge,Site\n", "'site' is named twice");
  refused("# only a comment\n\n", "no header line");
}

}  // namespace
}  // namespace stagewell
