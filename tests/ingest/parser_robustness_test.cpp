// Garbage must never stop the reading: lines made by mutating good readings at random, and random
// bytes, go through the record parser and the timestamp parser, and each comes out as a reading
// or a reject with a reason — nothing else, no crash. What is accepted must be what the text says:
// a reading whose line was left intact has exactly the generated values, and an accepted
// timestamp prints and parses back to the same instant. Fixed seeds: the same lines every run.
// (The parsers' exact rules are checked line by line in records_test.cpp and timestamp_test.cpp.)
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>
#include <variant>

#include "stagewell/records.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

// One mutation of `text`: a byte replaced, inserted or deleted, a run duplicated, or the text
// cut; the replacement bytes cover every value, so control bytes, quotes, commas and broken UTF-8
// all appear.
std::string mutate(std::string text, std::mt19937_64& random) {
  std::uniform_int_distribution<int> byte(0, 255);
  const auto at = [&](std::size_t size) {
    return std::uniform_int_distribution<std::size_t>(0, size)(random);
  };
  switch (std::uniform_int_distribution<int>(0, 4)(random)) {
    case 0:
      if (!text.empty()) text[at(text.size() - 1)] = static_cast<char>(byte(random));
      break;
    case 1:
      text.insert(text.begin() + static_cast<std::ptrdiff_t>(at(text.size())),
                  static_cast<char>(byte(random)));
      break;
    case 2:
      if (!text.empty()) text.erase(at(text.size() - 1), 1);
      break;
    case 3: {
      const std::size_t from = at(text.size());
      text.insert(from, text.substr(from, at(40)));
      break;
    }
    default:
      text.resize(at(text.size()));
  }
  return text;
}

struct Generated {
  std::string line;
  std::int64_t time_ms;
  std::string stage_text;
};

// A good reading of 2026 with a random time, offset and stage, written as a logger would.
Generated good_line(std::mt19937_64& random) {
  const std::int64_t base = 1'767'225'600'000;  // 2026-01-01T00:00:00Z (Python datetime)
  const std::int64_t time_ms =
      base + std::uniform_int_distribution<std::int64_t>(0, 364LL * 86'400)(random) * 1000;
  const int offset_h = std::uniform_int_distribution<int>(-11, 12)(random);
  // The same instant written in local time at that offset: time_ms + offset.
  const std::string local = format_timestamp_utc(time_ms + offset_h * 3'600'000LL);
  char zone[8];
  std::snprintf(zone, sizeof zone, "%c%02d:00", offset_h < 0 ? '-' : '+', std::abs(offset_h));
  const double stage = std::uniform_real_distribution<double>(-1.0, 50.0)(random);
  const std::string stage_text = std::to_string(stage);
  return {"gauge-7," + local.substr(0, local.size() - 1) + zone + "," + stage_text, time_ms,
          stage_text};
}

RecordParser make_parser() {
  SourceSpec source;
  auto parser =
      RecordParser::create(source, [](std::string_view site) { return site == "gauge-7"; });
  REQUIRE(parser.has_value());
  auto header = parser->parse_line(Line{"site,time,stage", 1, false});
  REQUIRE(std::holds_alternative<ColumnMap>(header));
  return std::move(*parser);
}

TEST_CASE("mutated and random lines: each is a reading or a reject with a reason") {
  std::mt19937_64 random(20261202);
  RecordParser parser = make_parser();
  int intact = 0, accepted = 0, rejected = 0, skipped = 0;
  for (std::int64_t n = 2; n < 60'000; ++n) {
    const Generated good = good_line(random);
    std::string text = good.line;
    const int kind = std::uniform_int_distribution<int>(0, 9)(random);
    if (kind >= 3 && kind <= 8) {
      for (int k = 1 + kind - 3; k > 0; --k) text = mutate(std::move(text), random);
    } else if (kind == 9) {  // random bytes, up to the line limit
      text.resize(std::uniform_int_distribution<std::size_t>(0, 4096)(random));
      for (char& c : text)
        c = static_cast<char>(std::uniform_int_distribution<int>(0, 255)(random));
    }
    text.erase(std::remove(text.begin(), text.end(), '\n'), text.end());  // one line each
    const ParsedLine parsed = parser.parse_line(Line{text, n, false});
    CAPTURE(text);
    if (const auto* record = std::get_if<Record>(&parsed)) {
      ++accepted;
      CHECK(record->site == "gauge-7");
      CHECK(std::isfinite(record->stage));
      CHECK(record->line_number == n);
      // Whatever was accepted names an instant that prints and reads back unchanged.
      auto again = parse_timestamp(format_timestamp_utc(record->time_ms), nullptr);
      REQUIRE(again.has_value());
      CHECK(*again == record->time_ms);
      if (text == good.line) {  // left intact: exactly the generated values
        ++intact;
        CHECK(record->time_ms == good.time_ms);
        CHECK(record->stage == std::stod(good.stage_text));
      }
    } else if (const auto* reject = std::get_if<LineReject>(&parsed)) {
      ++rejected;
      CHECK(!reject->reason.empty());
      CHECK(!name(reject->kind).empty());
      CHECK(reject->line_number == n);
      CHECK(text != good.line);  // a good line is never rejected
    } else if (std::holds_alternative<Skipped>(parsed)) {
      ++skipped;  // the mutation left a blank line or one starting with '#'
    } else {
      FAIL("a data line after a good header came out as neither a reading nor a reject");
    }
  }
  // The mix really exercised both outcomes (the counts depend only on the seed).
  CHECK(intact > 15'000);
  CHECK(accepted > intact);  // some mutations still read as a reading (e.g. a digit changed)
  CHECK(rejected > 20'000);
  INFO("skipped " << skipped);
}

TEST_CASE("mutated timestamps: accepted ones read back unchanged, the rest are errors") {
  std::mt19937_64 random(7);
  const TimeZone* no_zone = nullptr;
  auto denver = TimeZone::parse("America/Denver");
  REQUIRE(denver.has_value());
  int accepted = 0, refused = 0;
  for (int n = 0; n < 100'000; ++n) {
    const Generated good = good_line(random);
    std::string text = good.line.substr(good.line.find(',') + 1);
    text = text.substr(0, text.find(','));
    const int mutations = std::uniform_int_distribution<int>(0, 3)(random);
    for (int k = 0; k < mutations; ++k) text = mutate(std::move(text), random);
    CAPTURE(text);
    for (const TimeZone* zone : {no_zone, static_cast<const TimeZone*>(&*denver)}) {
      auto parsed = parse_timestamp(text, zone);
      if (!parsed) {
        ++refused;
        CHECK(!parsed.error().message.empty());
        continue;
      }
      ++accepted;
      auto again = parse_timestamp(format_timestamp_utc(*parsed), nullptr);
      REQUIRE(again.has_value());
      CHECK(*again == *parsed);
      if (mutations == 0) CHECK(*parsed == good.time_ms);
    }
  }
  CHECK(accepted > 50'000);
  CHECK(refused > 20'000);
}

}  // namespace
}  // namespace stagewell
