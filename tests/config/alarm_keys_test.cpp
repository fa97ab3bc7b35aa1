// A site's `alarms:`: values and defaults as read, and each mistake reported with its line and what
// is allowed (the contract in config.hpp and config/reference.yaml).
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::listing;

namespace {

// A valid site whose alarms are the text `alarms` (lines 11 on).
std::string site_with(std::string_view alarms) {
  return std::string(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: raceway-a        # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: 0.014     # 9
    slope: 0.001         # 10
)") + std::string(alarms);
}

}  // namespace

TEST_CASE("alarms are off unless written") {
  auto config =
      stagewell::parse_config(stagewell::test::yaml_text(site_with("")), "test.yaml", "/srv/flows");
  REQUIRE(config.has_value());
  CHECK_FALSE(config->sites[0].alarms.any());
}

TEST_CASE("every alarm key is read, with durations in seconds") {
  // 10 min = 600 s, 2h = 7200 s, 30m = 1800 s, 1h30m = 5400 s (definitions of the units).
  auto config = stagewell::parse_config(stagewell::test::yaml_text(site_with(R"(    alarms:
      low_flow: {below: 0.05, hysteresis: 0.01, hold: 10m}
      high_flow: {above: 2.5, hysteresis: 0.5, hold: 2h}
      stale: {after: 30m}
      rising: {rate: 0.3, hysteresis: 0.1, window: 1h30m}
)")),
                                        "test.yaml", "/srv/flows");
  INFO((config ? std::string() : listing(config.error())));
  REQUIRE(config.has_value());
  const auto& a = config->sites[0].alarms;
  CHECK(a.low_flow.threshold == 0.05);
  CHECK(a.low_flow.hysteresis == 0.01);
  CHECK(a.low_flow.hold_s == 600.0);
  CHECK(a.high_flow.threshold == 2.5);
  CHECK(a.high_flow.hold_s == 7200.0);
  CHECK(a.stale_s == 1800.0);
  CHECK(a.rising.threshold == 0.3);
  CHECK(a.rising.hysteresis == 0.1);
  CHECK(a.rising.hold_s == 0.0);  // default
  CHECK(a.rising_window_s == 5400.0);
}

TEST_CASE("a low flow alarm needs its threshold") {
  expect_one_error(site_with(R"(    alarms:       # 11
      low_flow:   # 12
        hold: 5m  # 13
)"),
                   13, "low_flow.below: required key is missing");  // cited at the map's first key
}

TEST_CASE("thresholds must be greater than 0") {
  expect_one_error(site_with(R"(    alarms:       # 11
      low_flow: {below: 0}  # 12
)"),
                   12, "must be greater than 0");
  expect_one_error(site_with(R"(    alarms:       # 11
      rising: {rate: -0.1}  # 12
)"),
                   12, "must be greater than 0");
}

TEST_CASE("a malformed duration is refused") {
  expect_one_error(site_with(R"(    alarms:       # 11
      stale: {after: 15 minutes}  # 12
)"),
                   12, "alarms.stale.after");
}

TEST_CASE("a negative hysteresis is refused") {
  expect_one_error(site_with(R"(    alarms:       # 11
      high_flow: {above: 2.0, hysteresis: -0.1}  # 12
)"),
                   12, "hysteresis = -0.1");
}

TEST_CASE("a high flow alarm that could never clear is refused") {
  // Clears below above - hysteresis = 0: a discharge is never below 0.
  expect_one_error(site_with(R"(    alarms:       # 11
      high_flow:           # 12
        above: 2.0         # 13
        hysteresis: 2.0    # 14
)"),
                   14, "must be less than above");
}

TEST_CASE("overlapping low and high bands are refused") {
  // low clears above 1.0 + 0.5 = 1.5; high clears below 1.8 - 0.4 = 1.4: they overlap.
  expect_one_error(site_with(R"(    alarms:       # 11
      low_flow: {below: 1.0, hysteresis: 0.5}  # 12
      high_flow:           # 13
        above: 1.8         # 14
        hysteresis: 0.4    # 15
)"),
                   14, "must be greater than low_flow's clear level");
}

TEST_CASE("an unknown alarm key is named with its line") {
  const auto errors = errors_of(site_with(R"(    alarms:       # 11
      low_flow: {below: 0.05}  # 12
      stale_after: 30m         # 13
)"));
  INFO(listing(errors));
  REQUIRE(errors.size() == 1);
  CHECK(errors[0].line == 13);
  CHECK(errors[0].key.find("stale_after") != std::string::npos);
}

TEST_CASE("the rising window is at least a minute") {
  expect_one_error(site_with(R"(    alarms:       # 11
      rising: {rate: 0.3, window: 30s}  # 12
)"),
                   12, "window");
}
