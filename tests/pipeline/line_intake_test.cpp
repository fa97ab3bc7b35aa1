// LineIntake: what became of each line, as the input rules say (docs/input.md, "Input: CSV
// readings" and "Repeats and conflicts"): header, blank and comment lines are not data; a new
// reading is stored; the same site, time and stage again is a repeat; another stage for a stored
// time is a conflict kept in rejects; a line that is no reading is a reject of its kind.
#include "stagewell/line_intake.hpp"

#include <doctest/doctest.h>

#include <memory>
#include <string>

#include "source_test_support.hpp"

namespace stagewell {
namespace {

using Kind = LineOutcome::Kind;

struct Harness : test::Service {
  std::int64_t number = 0;

  LineIntake intake(const SourceSpec& spec = SourceSpec{}) {
    auto made = LineIntake::create(spec, "test.csv", *ingestor);
    REQUIRE(made.has_value());
    return std::move(*made);
  }

  LineOutcome take(LineIntake& intake, std::string_view text) {
    auto taken = intake.take(Line{text, ++number, false});
    REQUIRE_MESSAGE(taken.has_value(), taken.error().message);
    return std::move(*taken);
  }
};

TEST_CASE("each line's outcome") {
  Harness h;
  auto intake = h.intake();
  CHECK(h.take(intake, "# logger 7").kind == Kind::not_data);
  CHECK_FALSE(intake.has_header());
  CHECK(h.take(intake, "site,time,stage").kind == Kind::not_data);
  CHECK(intake.has_header());
  CHECK(h.take(intake, "").kind == Kind::not_data);

  const LineOutcome stored = h.take(intake, "g1,2026-05-01T06:00:00Z,0.452");
  CHECK(stored.kind == Kind::stored);
  CHECK(stored.reached_store());
  CHECK(stored.reason.empty());
  REQUIRE(h.ingestor->commit().has_value());

  CHECK(h.take(intake, "g1,2026-05-01T06:00:00Z,0.452").kind == Kind::repeat);
  const LineOutcome conflict = h.take(intake, "g1,2026-05-01T06:00:00Z,0.5");
  CHECK(conflict.kind == Kind::conflict);
  CHECK(conflict.reject_kind == "conflict");
  CHECK(conflict.reason ==
        "conflict: g1 at this time is already stored with stage 0.452; the stored value is kept");

  const LineOutcome bad = h.take(intake, "g1,2026-05-01T06:01:00Z,high");
  CHECK(bad.kind == Kind::rejected);
  CHECK(bad.reject_kind == "bad_stage");
  CHECK(bad.reason.find("'high'") != std::string::npos);  // the reason quotes the value

  const LineOutcome too_long = [&] {
    auto taken = intake.take(Line{"g1,2026-05-01T06:02:00Z,0.4", ++h.number, /*too_long=*/true});
    REQUIRE(taken.has_value());
    return std::move(*taken);
  }();
  CHECK(too_long.kind == Kind::rejected);
  CHECK(too_long.reject_kind == "too_long");

  REQUIRE(h.ingestor->commit().has_value());
  const auto& counts = h.ingestor->counts();
  CHECK(counts.stored == 1);
  CHECK(counts.duplicates == 1);
  CHECK(counts.rejected == 3);  // conflict, bad_stage, too_long
  CHECK(counts.rejected_by_reason.at("conflict") == 1);
  CHECK(counts.rejected_by_reason.at("bad_stage") == 1);
  CHECK(counts.rejected_by_reason.at("too_long") == 1);
}

TEST_CASE("a stream with no usable header: every line is kept as bad_header") {
  Harness h;
  auto intake = h.intake();
  const LineOutcome first = h.take(intake, "when,level");  // names neither time nor stage
  CHECK(first.kind == Kind::rejected);
  CHECK(first.reject_kind == "bad_header");
  CHECK(h.take(intake, "2026-05-01T06:00:00Z,0.452").reject_kind == "bad_header");
  REQUIRE(h.ingestor->commit().has_value());
  CHECK(h.ingestor->counts().rejected == 2);
  CHECK(h.ingestor->counts().stored == 0);
}

TEST_CASE("skip reads the header only; assume_header gives the columns") {
  Harness h;
  auto resumed = h.intake();
  resumed.skip(Line{"time,site,stage", 1, false});
  resumed.skip(Line{"2026-05-01T06:00:00Z,g1,0.452", 2, false});  // stored by an earlier run
  CHECK(resumed.has_header());
  CHECK(h.take(resumed, "2026-05-01T06:01:00Z,g1,0.455").kind == Kind::stored);

  auto assumed = h.intake();
  assumed.assume_header("site,time,stage");
  CHECK(h.take(assumed, "g1,2026-05-01T06:02:00Z,0.458").kind == Kind::stored);
  REQUIRE(h.ingestor->commit().has_value());
  CHECK(h.ingestor->counts().stored == 2);  // the skipped line was not stored
}

TEST_CASE("a source's stage_units: each stage converted to the site's stage units as read") {
  Harness h;  // g1 and g2: metric, so stages in m
  SourceSpec in_cm;
  in_cm.stage_units = units::Length::cm;
  auto cm = h.intake(in_cm);
  h.take(cm, "site,time,stage");
  CHECK(h.take(cm, "g1,2026-05-01T06:00:00Z,45.2").kind == Kind::stored);
  SourceSpec in_mm;
  in_mm.stage_units = units::Length::mm;
  auto mm = h.intake(in_mm);
  h.take(mm, "site,time,stage");
  // 452 mm is the 0.452 m stored above (SI prefixes: 1 cm = 0.01 m, 1 mm = 0.001 m): a repeat.
  CHECK(h.take(mm, "g1,2026-05-01T06:00:00Z,452").kind == Kind::repeat);
  CHECK(h.take(mm, "g2,2026-05-01T06:00:00Z,1500").kind == Kind::stored);
  SourceSpec in_inches;
  in_inches.stage_units = units::Length::in;
  auto inches = h.intake(in_inches);
  h.take(inches, "site,time,stage");
  CHECK(h.take(inches, "g1,2026-05-01T06:01:00Z,17.8").kind == Kind::stored);
  auto metres = h.intake();  // no stage_units: the site's own
  h.take(metres, "site,time,stage");
  CHECK(h.take(metres, "g1,2026-05-01T06:02:00Z,0.452").kind == Kind::stored);
  REQUIRE(h.ingestor->commit().has_value());

  auto raw = test::raw_connection(h.dir.db());
  const auto stage_of = [&](std::string_view site, std::string_view time) {
    auto select = raw->prepare("SELECT stage FROM discharge WHERE site = ?1 AND time = ?2");
    REQUIRE(select.has_value());
    select->bind(1, site);
    select->bind(2, time);
    REQUIRE(select->step().value());
    return select->column_double(0);
  };
  // The double the text "0.452" parses to: 45.2 cm is 45.2 / 100 m, rounded once.
  CHECK(stage_of("g1", "2026-05-01T06:00:00Z") == 0.452);
  CHECK(stage_of("g2", "2026-05-01T06:00:00Z") == 1.5);
  // 1 in = 0.0254 m exactly (international yard and pound, 1959): 17.8 in = 0.45212 m.
  CHECK(stage_of("g1", "2026-05-01T06:01:00Z") == doctest::Approx(0.45212).epsilon(1e-14));
  CHECK(stage_of("g1", "2026-05-01T06:02:00Z") == 0.452);
}

}  // namespace
}  // namespace stagewell
