// CSV readings: header mapping, records, and every reject reason (definitions, see records.hpp).
// Instants are from python datetime (see timestamp_test.cpp).
#include "stagewell/records.hpp"

#include <doctest/doctest.h>

#include <set>
#include <string>
#include <variant>
#include <vector>

namespace stagewell {
namespace {

struct OwnedRecord {
  std::string site;
  std::int64_t time_ms;
  double stage;
  std::int64_t line_number;
};

struct Outcome {
  std::vector<OwnedRecord> records;
  std::vector<LineReject> rejects;
  std::vector<Error> errors;
  int headers = 0;
  int skipped = 0;
};

SourceSpec source_spec() {
  SourceSpec source;
  source.path = "/tmp/unused";
  return source;
}

Outcome read(std::string_view text, SourceSpec source = source_spec(), std::size_t limit = 4096) {
  const std::set<std::string, std::less<>> known{"weir-1", "flume-2", "odd \"name\""};
  auto parser = RecordParser::create(
      source, [&](std::string_view site) { return known.find(site) != known.end(); });
  REQUIRE_MESSAGE(parser.has_value(), parser.error().message);
  Outcome out;
  LineSplitter splitter(limit);
  const LineSink sink = [&](const Line& line) {
    ParsedLine parsed = parser->parse_line(line);
    if (auto* record = std::get_if<Record>(&parsed)) {
      out.records.push_back(
          {std::string(record->site), record->time_ms, record->stage, record->line_number});
    } else if (auto* reject = std::get_if<LineReject>(&parsed)) {
      out.rejects.push_back(*reject);
    } else if (auto* error = std::get_if<Error>(&parsed)) {
      out.errors.push_back(*error);
    } else if (std::holds_alternative<ColumnMap>(parsed)) {
      ++out.headers;
    } else {
      ++out.skipped;
    }
  };
  splitter.feed(text, sink);
  splitter.finish(sink);
  return out;
}

// The single reject of `line` after a standard header.
LineReject reject_of(std::string_view line, SourceSpec source = source_spec()) {
  const Outcome out = read("site,time,stage\n" + std::string(line) + "\n", source);
  REQUIRE(out.records.empty());
  REQUIRE(out.rejects.size() == 1);
  CHECK(out.rejects[0].line_number == 2);
  return out.rejects[0];
}

bool contains(std::string_view text, std::string_view part) {
  return text.find(part) != std::string_view::npos;
}

TEST_CASE("header maps names in any order and case; extra columns are ignored") {
  const Outcome out = read(
      "# logger export\n\n Stage ,battery_V,TIME,Site\n1.25,12.6,2026-03-01T06:15:00Z,weir-1\n");
  CHECK(out.headers == 1);
  CHECK(out.skipped == 2);
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].site == "weir-1");
  CHECK(out.records[0].time_ms == 1772345700000);  // python datetime
  CHECK(out.records[0].stage == 1.25);
  CHECK(out.records[0].line_number == 4);
}

TEST_CASE("header names come from ColumnNames") {
  SourceSpec source = source_spec();
  source.columns.site = "station";
  source.columns.time = "timestamp";
  source.columns.stage = "level_m";
  const Outcome out = read("station,timestamp,level_m\nflume-2,2026-03-01T06:15:00Z,0.5\n", source);
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].site == "flume-2");
  const Outcome bad = read("station,timestamp,level_m\nflume-2,yesterday,0.5\n", source);
  REQUIRE(bad.rejects.size() == 1);
  CHECK(bad.rejects[0].field == "timestamp");
  CHECK(read("site,time,stage\n", source).errors.size() == 1);  // the default names do not match
}

TEST_CASE("a missing column is an error for the whole stream") {
  const Outcome out = read("site,time,level\nweir-1,2026-03-01T06:15:00Z,1\n# more\n");
  CHECK(out.records.empty());
  REQUIRE(out.errors.size() == 3);  // the header and every later line
  CHECK(contains(out.errors[0].message, "line 1"));
  CHECK(contains(out.errors[0].message, "no 'stage' column"));
  CHECK(contains(out.errors[0].message, "'site', 'time', 'level'"));
}

TEST_CASE("a column named twice is an error") {
  const Outcome out = read("site,time,stage,time\n");
  REQUIRE(out.errors.size() == 1);
  CHECK(contains(out.errors[0].message, "'time' twice (fields 2 and 4)"));
}

TEST_CASE("a source with a fixed site needs no site column and ignores one") {
  SourceSpec source = source_spec();
  source.site = "weir-1";
  Outcome out = read("time,stage\n2026-03-01T06:15:00Z,1.5\n", source);
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].site == "weir-1");
  out = read("site,time,stage\nNorth bank logger,2026-03-01T06:15:00Z,1.5\n", source);
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].site == "weir-1");
  // Without a fixed site the same header lacks a required column.
  CHECK(read("time,stage\n").errors.size() == 1);
}

TEST_CASE("byte order mark, CRLF, quoted fields, comments between data lines") {
  const Outcome out = read(
      "\xEF\xBB\xBFsite,time,stage\r\n"
      "\"weir-1\",\"2026-03-01T06:15:00Z\",\"1.25\"\r\n"
      "# calibration visit\r\n"
      "\r\n"
      "\"odd \"\"name\"\"\", 2026-03-01T06:15:00.250-07:00 , +0.5\r\n");
  CHECK(out.rejects.empty());
  REQUIRE(out.records.size() == 2);
  CHECK(out.records[0].site == "weir-1");
  CHECK(out.records[0].stage == 1.25);
  CHECK(out.records[1].site == "odd \"name\"");
  CHECK(out.records[1].time_ms == 1772370900250);  // python datetime
  CHECK(out.records[1].stage == 0.5);
  CHECK(out.records[1].line_number == 5);
}

TEST_CASE("stage numbers: sign, exponent; locale plays no part (std::from_chars)") {
  const auto stage_of = [](std::string_view text) {
    const Outcome out = read("site,time,stage\nweir-1,2026-03-01T06:15:00Z," + std::string(text));
    REQUIRE(out.records.size() == 1);
    return out.records[0].stage;
  };
  CHECK(stage_of("-0.25") == -0.25);
  CHECK(stage_of("+3") == 3.0);
  CHECK(stage_of("15e-2") == 0.15);
  CHECK(stage_of("2.5E1") == 25.0);
}

TEST_CASE("local timestamps use the source's time zone") {
  SourceSpec source = source_spec();
  source.time_zone = "America/Denver";
  const Outcome out = read("site,time,stage\nweir-1,2026-11-01 01:30:00,1\n", source);
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].time_ms == 1793518200000);  // python zoneinfo, fold=0
  source.time_zone = "Nowhere/Special";
  CHECK_FALSE(RecordParser::create(source, {}).has_value());
}

TEST_CASE("reject: field_count") {
  const LineReject r = reject_of("weir-1,2026-03-01T06:15:00Z");
  CHECK(r.kind == RejectKind::field_count);
  CHECK(r.reason == "expected 3 fields as in the header, found 2");
  CHECK(reject_of("weir-1,2026-03-01T06:15:00Z,1,2").kind == RejectKind::field_count);
}

TEST_CASE("reject: malformed quoting names the column") {
  const LineReject r = reject_of("weir-1,\"2026-03-01T06:15:00Z,1.0");
  CHECK(r.kind == RejectKind::malformed);
  CHECK(r.field == "time");
  CHECK(contains(r.reason, "field 2 opens a quote that is not closed"));
}

TEST_CASE("reject: unknown or empty site") {
  LineReject r = reject_of("weir-9,2026-03-01T06:15:00Z,1.0");
  CHECK(r.kind == RejectKind::unknown_site);
  CHECK(r.field == "site");
  CHECK(r.reason == "site 'weir-9' is not a configured site");
  r = reject_of(",2026-03-01T06:15:00Z,1.0");
  CHECK(r.kind == RejectKind::unknown_site);
  CHECK(r.reason == "the site is empty");
}

TEST_CASE("reject: bad time says what was expected") {
  LineReject r = reject_of("weir-1,2026-02-30T06:15:00Z,1.0");
  CHECK(r.kind == RejectKind::bad_time);
  CHECK(r.field == "time");
  CHECK(contains(r.reason, "time '2026-02-30T06:15:00Z'"));
  CHECK(contains(r.reason, "day 30 does not exist in 2026-02"));
  CHECK(contains(r.reason, "expected a timestamp like 2026-03-01T06:15:00Z"));
  r = reject_of("weir-1,2026-03-01 06:15:00,1.0");
  CHECK(r.kind == RejectKind::bad_time);
  CHECK(contains(r.reason, "timestamp has no UTC offset and the source has no time_zone"));
}

TEST_CASE("reject: a local time inside the spring DST gap") {
  SourceSpec source = source_spec();
  source.time_zone = "America/Denver";
  const LineReject r = reject_of("weir-1,2026-03-08 02:30:00,1.0", source);
  CHECK(r.kind == RejectKind::bad_time);
  CHECK(contains(r.reason, "does not exist in America/Denver"));
}

TEST_CASE("reject: non-numeric stage") {
  LineReject r = reject_of("weir-1,2026-03-01T06:15:00Z,high");
  CHECK(r.kind == RejectKind::bad_stage);
  CHECK(r.field == "stage");
  CHECK(r.reason == "stage 'high' is not a number");
  r = reject_of("weir-1,2026-03-01T06:15:00Z,\"1,25\"");
  CHECK(r.kind == RejectKind::bad_stage);
  CHECK(contains(r.reason, "use '.' as the decimal point"));
  CHECK(reject_of("weir-1,2026-03-01T06:15:00Z,").reason == "the stage is empty");
  CHECK(reject_of("weir-1,2026-03-01T06:15:00Z,0x1A").kind == RejectKind::bad_stage);
  CHECK(reject_of("weir-1,2026-03-01T06:15:00Z,1.5m").kind == RejectKind::bad_stage);
  CHECK(reject_of("weir-1,2026-03-01T06:15:00Z,1.5 m").kind == RejectKind::bad_stage);
}

TEST_CASE("reject: non-finite stage") {
  for (std::string_view text : {"nan", "NaN", "inf", "-Infinity", "1e999"}) {
    CAPTURE(text);
    const LineReject r = reject_of("weir-1,2026-03-01T06:15:00Z," + std::string(text));
    CHECK(r.kind == RejectKind::non_finite_stage);
    CHECK(r.field == "stage");
  }
}

TEST_CASE("reject: not text") {
  LineReject r = reject_of(std::string("weir-1,2026-03-01T06:15:00Z,1\0", 30));
  CHECK(r.kind == RejectKind::not_text);
  CHECK(r.reason == "not text: NUL byte at byte 30");
  r = reject_of("weir-1,2026-03-01T06:15:00Z,\xFF\xFE");
  CHECK(r.kind == RejectKind::not_text);
  CHECK(contains(r.reason, "invalid UTF-8"));
}

TEST_CASE("reject: too long, and reading goes on after it") {
  const std::string long_line = "weir-1,2026-03-01T06:15:00Z,1" + std::string(100, '0');
  const Outcome out = read("site,time,stage\n" + long_line + "\nweir-1,2026-03-01T06:15:00Z,2\n",
                           source_spec(), 64);
  REQUIRE(out.rejects.size() == 1);
  CHECK(out.rejects[0].kind == RejectKind::too_long);
  CHECK(out.rejects[0].line_number == 2);
  CHECK(out.rejects[0].reason == "the line is longer than 64 bytes");
  REQUIRE(out.records.size() == 1);
  CHECK(out.records[0].line_number == 3);
}

TEST_CASE("reject kinds have stable names") {
  CHECK(name(RejectKind::too_long) == "too_long");
  CHECK(name(RejectKind::not_text) == "not_text");
  CHECK(name(RejectKind::malformed) == "malformed");
  CHECK(name(RejectKind::field_count) == "field_count");
  CHECK(name(RejectKind::unknown_site) == "unknown_site");
  CHECK(name(RejectKind::bad_time) == "bad_time");
  CHECK(name(RejectKind::bad_stage) == "bad_stage");
  CHECK(name(RejectKind::non_finite_stage) == "non_finite_stage");
}

}  // namespace
}  // namespace stagewell
