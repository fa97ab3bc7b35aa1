// Bad sites (roughness, slope, ids, stage, checks): each configuration has one mistake (unless
// said otherwise), which must be reported with its line and a message that says what is allowed.
// The rules checked are those of the configuration contract (config.hpp, config/reference.yaml);
// the bounds on Manning's n and slope are common practice (see site_keys.cpp).
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::has_error;
using stagewell::test::listing;

TEST_CASE("Manning's n outside 0.008 to 0.25 (common practice) is refused") {
  // 1.4 is 0.014 with the decimal point slipped; 0.005 is smoother than any channel lining.
  for (const char* n : {"1.4", "0.005", "0"}) {
    CAPTURE(n);
    const std::string text = std::string(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: )") + n + R"(
    slope: 0.001         # 10
)";
    expect_one_error(text, 9, "must be from 0.008 to 0.25");
  }
}

TEST_CASE("the slope must be greater than 0 and at most 0.5") {
  for (const char* slope : {"0", "-0.001", "1.5"}) {
    CAPTURE(slope);
    const std::string text = std::string(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: 0.014     # 9
    slope: )") + slope + "\n";
    expect_one_error(
        text, 10,
        "sites[0].slope = " + std::string(slope) + ": must be greater than 0 and at most 0.5");
  }
}

TEST_CASE("with breaks, roughness has one n per subsection or a single n") {
  expect_one_error(
      R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: [[0.0, 2.1], [0.8, 0.2], [2.5, 0.0], [4.0, 2.0]] # 7
      breaks: [1.0, 3.5] # 8
    roughness: [0.035, 0.030] # 9
    slope: 0.002         # 10
)",
      9, "needs 3 values, one per subsection (2 breaks + 1), or a single number for all; got 2");
}

TEST_CASE("without breaks, roughness is a single n") {
  expect_one_error(
      R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: [0.014, 0.020] # 9
    slope: 0.001         # 10
)",
      9, "a section without breaks has one roughness: write a single number; got 2 values");
}

TEST_CASE("an unknown key suggests the closest known key") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughnes: 0.014      # 9
    slope: 0.001         # 10
)");
  INFO(listing(errors));
  CHECK(errors.size() == 2);
  CHECK(has_error(errors, 9, "sites[0].roughnes: unknown key; did you mean `roughness`?"));
  CHECK(has_error(errors, 4, "sites[0].roughness: required key is missing"));
}

TEST_CASE("an unknown key far from every known key lists the keys") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
      height: 1.0        # 8
    roughness: 0.014     # 9
    slope: 0.001         # 10
    colour: blue         # 11
)");
  INFO(listing(errors));
  CHECK(
      has_error(errors, 11, "sites[0].colour: unknown key; the keys here are: id, name, section"));
}

TEST_CASE("duplicate site ids") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
  - id: outlet           # 8
    section: {shape: circular, diameter: 0.6} # 9
    roughness: 0.013     # 10
    slope: 0.002         # 11
)",
                   8, "sites[1].id = outlet: duplicate site id (first used on line 4)");
}

TEST_CASE("a site id holds only letters, digits, '_', '.' and '-'") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond outlet/2    # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
)",
                   4, "sites[0].id = pond outlet/2: a site id is 1 to 64 characters");
}

TEST_CASE("an empty site list") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites: []                # 3
)",
                   3, "sites = []: needs at least one site");
}

TEST_CASE("unknown stage units list the choices") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
    stage:               # 8
      units: yd          # 9
)",
                   9, "sites[0].stage.units = yd: unknown unit; choose one of m, cm, mm, ft, in");
}

TEST_CASE("zero flow must be a finite number") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
    stage: {units: cm, zero_flow: nan} # 8
)",
                   8, "sites[0].stage.zero_flow = nan: must be a finite number");
}

TEST_CASE("min_stage must be below max_stage") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
    checks:              # 8
      min_stage: 1.5     # 9
      max_stage: 1.5     # 10
)",
                   10, "sites[0].checks.max_stage = 1.5: must be greater than min_stage (1.5)");
}

TEST_CASE("a duration without a unit, or with words, is refused") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
    checks:              # 8
      flatline: 6 hours  # 9
)",
                   9, "sites[0].checks.flatline = 6 hours: must be a duration");
}

TEST_CASE("a key written twice") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
    slope: 0.003         # 8
)",
                   8, "sites[0].slope: written twice (first on line 7); keep one");
}

TEST_CASE("uncertainty: percentages need their %, within 0 to 100 %; the stage's at least 0") {
  // A bare 0.1 could mean 0.1 % or 10 %: refused. The bounds are those of config/reference.yaml.
  const struct {
    const char* value;
    const char* message;
  } cases[] = {
      {"0.1", "must be a percentage written with its %, e.g. 10%"},
      {"ten%", "must be a percentage written with its %, e.g. 10%"},
      {"150%", "must be from 0 to 100 %"},
      {"-5%", "must be from 0 to 100 %"},
  };
  for (const auto& c : cases) {
    CAPTURE(c.value);
    const std::string text = std::string(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section: {shape: rectangular, width: 2.0, height: 1.0}  # 5
    roughness: 0.014     # 6
    slope: 0.001         # 7
    uncertainty:         # 8
      roughness: )") + c.value +
                             "\n";
    expect_one_error(text, 9, c.message);
  }
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section: {shape: rectangular, width: 2.0, height: 1.0}  # 5
    roughness: 0.014     # 6
    slope: 0.001         # 7
    uncertainty: {stage: -0.01}  # 8
)",
                   8, "must be at least 0");
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section: {shape: rectangular, width: 2.0, height: 1.0}  # 5
    roughness: 0.014     # 6
    slope: 0.001         # 7
    checks: {unsteady: 5}  # 8
)",
                   8, "must be a percentage written with its %");
}

TEST_CASE("uncertainty and checks.unsteady: defaults, values, and a change that writes them") {
  const auto config = stagewell::parse_config(stagewell::test::yaml_text(R"(
units: metric
database: flows.db
sites:
  - id: plain
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
  - id: stated
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
    stage: {units: cm}
    checks: {unsteady: 2.5 %}
    uncertainty: {roughness: 7.5%, slope: 0%, stage: 0.3}
    changes:
      - from: 2026-06-01T00:00:00Z
        uncertainty: {roughness: 4%}
)"),
                                              "test.yaml", "/srv/flows");
  REQUIRE(config);
  const auto& plain = config->sites[0];
  CHECK(plain.uncertainty == stagewell::UncertaintySpec{0.10, 0.10, 0.005});
  CHECK(plain.checks.unsteady == doctest::Approx(0.05));
  const auto& stated = config->sites[1];
  CHECK(stated.checks.unsteady == doctest::Approx(0.025));
  CHECK(stated.uncertainty.roughness == doctest::Approx(0.075));
  CHECK(stated.uncertainty.slope == 0.0);
  CHECK(stated.uncertainty.stage == doctest::Approx(0.3));
  REQUIRE(stated.changes.size() == 1);
  // A change overrides only what it writes.
  CHECK(stated.changes[0].site.uncertainty.roughness == doctest::Approx(0.04));
  CHECK(stated.changes[0].site.uncertainty.stage == doctest::Approx(0.3));
}
