// A site's history (`changes:`) and stage corrections (`corrections:`): what they resolve to, and
// the refusals of bad ones with file:line:col. Times: RFC 3339 (section 5.6); the epoch values
// were computed with Debian's /usr/bin/python3:
//   datetime(2025,6,1,tzinfo=timezone.utc).timestamp() * 1000            = 1748736000000
//   datetime(2025,9,15,8,0,tzinfo=timezone(timedelta(hours=-6))).timestamp() * 1000
//                                                                        = 1757944800000
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::has_error;
using stagewell::test::listing;

namespace {

// A site whose lines 1-11 are fixed; a test appends its `changes:` or `corrections:` at line 12.
std::string site_with(std::string_view history) {
  return std::string(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: canal            # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: 0.020     # 9
    slope: 0.001         # 10
    stage: {offset: 1.5} # 11
)") + std::string(history);
}

const stagewell::SiteConfig& only_site(const stagewell::ConfigResult& config) {
  REQUIRE(config.has_value());
  REQUIRE(config->sites.size() == 1);
  return config->sites.front();
}

}  // namespace

TEST_CASE("each change applies on top of the one before; the site's keys hold before the first") {
  const auto config = stagewell::parse_config(stagewell::test::yaml_text(site_with(R"(    changes:
      - from: 2025-06-01T00:00:00Z
        roughness: 0.032
      - from: 2025-09-15T08:00:00-06:00
        section: {shape: surveyed, points: [[0, 2.0], [1.2, 0.1], [3.0, 0.0], [4.4, 1.9]]}
        stage: {zero_flow: 0.2}
)")),
                                              "test.yaml", "/srv/flows");
  INFO(listing(config ? std::vector<stagewell::ConfigError>{} : config.error()));
  const auto& site = only_site(config);
  REQUIRE(site.changes.size() == 2);
  CHECK(site.changes[0].from_ms == 1748736000000);
  CHECK(site.changes[1].from_ms == 1757944800000);

  // Before the first change: the site's own keys.
  const auto& before = site.version_at(1748736000000 - 1);
  CHECK(&before == &site);
  CHECK(before.roughness == std::vector<double>{0.020});
  // From the first change: the new n, everything else carried.
  const auto& june = site.version_at(1748736000000);
  CHECK(june.roughness == std::vector<double>{0.032});
  CHECK(june.section.shape == stagewell::Shape::rectangular);
  CHECK(june.stage.offset == 1.5);
  // From the second: the new section, the n of the first change, the offset of the site, the new
  // zero flow (a change overrides only the stage keys it writes).
  const auto& september = site.version_at(1757944800000 + 3600000);
  CHECK(september.section.shape == stagewell::Shape::surveyed);
  CHECK(september.section.points.size() == 4);
  CHECK(september.roughness == std::vector<double>{0.032});
  CHECK(september.stage.offset == 1.5);
  CHECK(september.stage.zero_flow == 0.2);
}

TEST_CASE("a drift grows linearly from 0 at `from` to its value at `to`; offset is constant") {
  const auto config =
      stagewell::parse_config(stagewell::test::yaml_text(site_with(R"(    corrections:
      - {from: 2025-06-01T00:00:00Z, to: 2025-06-11T00:00:00Z, drift: -0.02}
      - {from: 2025-05-01T00:00:00Z, to: 2025-05-02T00:00:00Z, offset: 0.01, drift: 0.004}
)")),
                              "test.yaml", "/srv/flows");
  const auto& site = only_site(config);
  REQUIRE(site.corrections.size() == 2);
  // Sorted by time whatever the order written.
  CHECK(site.corrections[0].from_ms < site.corrections[1].from_ms);
  const std::int64_t start = 1748736000000;  // 2025-06-01T00:00:00Z
  const std::int64_t day_ms = 86'400'000;
  // Closed form: correction(t) = offset + drift * (t - from) / (to - from).
  REQUIRE(site.correction_at(start) != nullptr);
  CHECK(site.correction_at(start)->at(start) == doctest::Approx(0.0));
  CHECK(site.correction_at(start + 5 * day_ms)->at(start + 5 * day_ms) ==
        doctest::Approx(-0.01));  // half way: half the drift
  const std::int64_t last = start + 10 * day_ms - 1;
  CHECK(site.correction_at(last)->at(last) == doctest::Approx(-0.02).epsilon(1e-9));
  // The end is excluded; before the start there is none.
  CHECK(site.correction_at(start + 10 * day_ms) == nullptr);
  CHECK(site.correction_at(start - 1) == nullptr);
  // Offset and drift together: 0.01 + 0.004 * 0.25 at a quarter of the day.
  const std::int64_t may = start - 31 * day_ms;
  CHECK(site.correction_at(may + day_ms / 4)->at(may + day_ms / 4) == doctest::Approx(0.011));
}

TEST_CASE("a `from` that is not a time is refused with its line") {
  expect_one_error(site_with(R"(    changes:             # 12
      - from: next tuesday # 13
        roughness: 0.03    # 14
)"),
                   13,
                   "test.yaml:13:15: sites[0].changes[0].from = next tuesday: must be an "
                   "RFC 3339 time");
  // Without an offset the time is ambiguous.
  expect_one_error(site_with(R"(    corrections:                      # 12
      - from: 2025-06-01T00:00:00       # 13
        to: 2025-06-02T00:00:00Z        # 14
        offset: 0.02                    # 15
)"),
                   13, "must be an RFC 3339 time with its offset");
}

TEST_CASE("changes out of time order are refused") {
  expect_one_error(site_with(R"(    changes:                            # 12
      - from: 2025-09-01T00:00:00Z        # 13
        roughness: 0.03                   # 14
      - from: 2025-06-01T00:00:00Z        # 15
        roughness: 0.04                   # 16
)"),
                   15,
                   "changes must be in time order: this one is not after the change on line 13");
}

TEST_CASE("overlapping corrections are refused, naming the other") {
  expect_one_error(
      site_with(R"(    corrections:                                                      # 12
      - {from: 2025-06-01T00:00:00Z, to: 2025-06-10T00:00:00Z, offset: 0.02}  # 13
      - {from: 2025-06-09T00:00:00Z, to: 2025-06-20T00:00:00Z, drift: 0.01}   # 14
)"),
      14,
      "test.yaml:14:16: sites[0].corrections[1].from = 2025-06-09T00:00:00Z: overlaps the "
      "correction on line 13 (from 2025-06-01T00:00:00Z to 2025-06-10T00:00:00Z)");
  // Touching is not overlapping: the end is excluded.
  CHECK(errors_of(site_with(R"(    corrections:
      - {from: 2025-06-01T00:00:00Z, to: 2025-06-10T00:00:00Z, offset: 0.02}
      - {from: 2025-06-10T00:00:00Z, to: 2025-06-20T00:00:00Z, drift: 0.01}
)"))
            .empty());
}

TEST_CASE("a correction needs an end after its start and an amount") {
  expect_one_error(
      site_with(R"(    corrections:                                                  # 12
      - {from: 2025-06-10T00:00:00Z, to: 2025-06-01T00:00:00Z, offset: 0.02}  # 13
)"),
      13, "must be after `from` (2025-06-10T00:00:00Z)");
  expect_one_error(site_with(R"(    corrections:                                          # 12
      - {from: 2025-06-01T00:00:00Z, to: 2025-06-10T00:00:00Z}  # 13
)"),
                   13, "a correction needs `offset`, `drift` or both");
}

TEST_CASE("a change that makes the section invalid is refused like a site's section") {
  // The last point is lower than the lowest: the section holds no water on that side.
  const auto errors = errors_of(site_with(R"(    changes:                                   # 12
      - from: 2025-09-15T08:00:00-06:00          # 13
        section:                                 # 14
          shape: surveyed                        # 15
          points: [[0, 2.0], [1.2, 0.1], [3.0, 0.0], [4.4, -0.5]]  # 16
)"));
  INFO(listing(errors));
  CHECK(has_error(errors, 16,
                  "sites[0].changes[0].section.points[3] = [4.4, -0.5]: the section "
                  "must rise to a bank on both sides"));
  // A key the shape does not take, as for a site.
  expect_one_error(site_with(R"(    changes:                                   # 12
      - from: 2025-09-15T08:00:00-06:00          # 13
        section: {shape: circular, diameter: 0.9, width: 2}  # 14
)"),
                   14, "not used by a circular section");
}

TEST_CASE("a change is validated with the site's bounds and keys") {
  expect_one_error(site_with(R"(    changes:                   # 12
      - from: 2025-06-01T00:00:00Z # 13
        roughness: 1.4             # 14
)"),
                   14, "sites[0].changes[0].roughness = 1.4: must be from 0.008 to 0.25");
  expect_one_error(site_with(R"(    changes:                   # 12
      - from: 2025-06-01T00:00:00Z # 13
        roughnes: 0.03             # 14
)"),
                   14, "unknown key; did you mean `roughness`?");
  expect_one_error(site_with(R"(    changes:                   # 12
      - from: 2025-06-01T00:00:00Z # 13
)"),
                   13, "a change needs at least one key besides `from`");
}

TEST_CASE("a change to a section with more subsections needs its roughness list") {
  // Two n carried over cannot serve a section with three subsections.
  const std::string text = R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: [[0, 2], [1, 0.5], [3, 0], [4, 2]]  # 7
      breaks: [1]        # 8
    roughness: [0.05, 0.03]  # 9
    slope: 0.001         # 10
    changes:             # 11
      - from: 2025-06-01T00:00:00Z  # 12
        section: {shape: surveyed, points: [[0, 2], [1, 0.5], [3, 0], [4, 2]], breaks: [1, 3.5]}  # 13
)";
  expect_one_error(text, 13,
                   "has 3 subsections, but the roughness in force before this change "
                   "has 2 values");
}
