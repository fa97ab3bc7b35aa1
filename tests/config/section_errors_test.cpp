// Bad sections: each configuration has one mistake (unless said otherwise), which must be reported
// with its line and a message that says what is allowed. The rules checked are those of the
// configuration contract (config.hpp, config/reference.yaml).
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::has_error;
using stagewell::test::listing;

TEST_CASE("the minimal rectangular site these tests vary loads") {
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
)");
  INFO(listing(errors));
  CHECK(errors.empty());
}

TEST_CASE("a width of zero or less is refused, at the value's line and column") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: -2.4        # 7
      height: 1.0        # 8
    roughness: 0.014     # 9
    slope: 0.001         # 10
)");
  INFO(listing(errors));
  REQUIRE(errors.size() == 1);
  CHECK(errors[0].to_string() ==
        "test.yaml:7:14: sites[0].section.width = -2.4: must be greater than 0");
}

TEST_CASE("text where a number is needed") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: wide        # 7
      height: 1.0        # 8
    roughness: 0.014     # 9
    slope: 0.001         # 10
)",
                   7, "sites[0].section.width = wide: must be a number");
}

TEST_CASE("a circular section needs a diameter greater than 0") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: culvert          # 4
    section:             # 5
      shape: circular    # 6
      diameter: 0        # 7
    roughness: 0.013     # 8
    slope: 0.002         # 9
)",
                   7, "sites[0].section.diameter = 0: must be greater than 0");
}

TEST_CASE("a missing required key is reported where its map starts") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: rectangular # 6
      width: 2.0         # 7
    roughness: 0.014     # 8
    slope: 0.001         # 9
)",
                   6, "sites[0].section.height: required key is missing");
}

TEST_CASE("a key of another shape is an error naming the shapes that use it") {
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
      diameter: 0.9      # 9
    roughness: 0.014     # 10
    slope: 0.001         # 11
)",
      9, "sites[0].section.diameter: not used by a rectangular section (only by circular)");
}

TEST_CASE("a trapezoid's side slope may be 0 but not negative, on either side") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: feeder           # 4
    section:             # 5
      shape: trapezoidal # 6
      width: 1.5         # 7
      side_slope: [0, -1] # 8
      height: 1.0        # 9
    roughness: 0.022     # 10
    slope: 0.0005        # 11
)",
                   8, "sites[0].section.side_slope[1] = -1: must be at least 0");
}

TEST_CASE("a triangle's side slope must be greater than 0") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: ditch            # 4
    section:             # 5
      shape: triangular  # 6
      side_slope: 0      # 7
      height: 0.6        # 8
    roughness: 0.03      # 9
    slope: 0.004         # 10
)",
                   7, "sites[0].section.side_slope = 0: must be greater than 0");
}

TEST_CASE("a triangle may have one vertical side, not two") {
  expect_one_error(
      R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: gutter           # 4
    section:             # 5
      shape: triangular  # 6
      side_slope: [0, 0] # 7
      height: 0.15       # 8
    roughness: 0.016     # 9
    slope: 0.01          # 10
)",
      7, "side_slope = [0, 0]: a triangular section needs at least one side slope greater than 0");
  // A gutter against a kerb: vertical on one side.
  CHECK(errors_of(R"(
units: metric
database: flows.db
sites:
  - id: gutter
    section: {shape: triangular, side_slope: [0, 12], height: 0.15}
    roughness: 0.016
    slope: 0.01
)")
            .empty());
}

TEST_CASE("a surveyed section has at most 15 breaks (16 subsections)") {
  // 16 breaks at 1.5, 2.5, ... 16.5, all inside a section from station 0 to 18.
  std::string points = "[[0, 10]";
  std::string breaks = "[";
  for (int i = 1; i <= 16; ++i) {
    points += ", [" + std::to_string(i) + ", 0]";
    breaks += (i > 1 ? ", " : "") + std::to_string(i) + ".5";
  }
  points += ", [17, 10], [18, 10]]";
  breaks += "]";
  const std::string text = R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: )" + points + R"(
      breaks: )" + breaks + R"(
    roughness: 0.035     # 9
    slope: 0.002         # 10
)";
  expect_one_error(text, 8, "at most 15 breaks (16 subsections)");
}

TEST_CASE("a side slope list has exactly two entries") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: ditch            # 4
    section:             # 5
      shape: triangular  # 6
      side_slope: [1, 2, 3] # 7
      height: 0.6        # 8
    roughness: 0.03      # 9
    slope: 0.004         # 10
)",
                   7,
                   "side_slope = [1, 2, 3]: must be one number for both sides, or [left, right]");
}

TEST_CASE("a surveyed section needs at least 3 points") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: [[0, 2], [4, 0]] # 7
    roughness: 0.035     # 8
    slope: 0.002         # 9
)",
                   7, "needs at least 3 points [station, elevation]; got 2");
}

TEST_CASE("surveyed stations must not decrease") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points:            # 7
        - [0.0, 2.1]     # 8
        - [2.5, 0.0]     # 9
        - [0.8, 0.2]     # 10
        - [4.0, 2.0]     # 11
    roughness: 0.035     # 12
    slope: 0.002         # 13
)",
                   10, "sites[0].section.points[2] = [0.8, 0.2]: stations must not decrease");
}

TEST_CASE("a surveyed section must rise to a bank on both sides") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points:            # 7
        - [0.0, 2.1]     # 8
        - [0.8, 0.2]     # 9
        - [2.5, 0.0]     # 10
    roughness: 0.035     # 11
    slope: 0.002         # 12
)",
                   10, "must rise to a bank on both sides: the last point (elevation 0)");
}

TEST_CASE("breaks must lie strictly inside the section") {
  expect_one_error(
      R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: [[0.0, 2.1], [0.8, 0.2], [2.5, 0.0], [4.0, 2.0]] # 7
      breaks:            # 8
        - 1.0            # 9
        - 4.0            # 10
    roughness: [0.035, 0.030, 0.045] # 11
    slope: 0.002         # 12
)",
      10, "breaks[1] = 4.0: must lie strictly between the first station (0) and the last (4)");
}

TEST_CASE("breaks must increase") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: creek            # 4
    section:             # 5
      shape: surveyed    # 6
      points: [[0.0, 2.1], [0.8, 0.2], [2.5, 0.0], [4.0, 2.0]] # 7
      breaks:            # 8
        - 3.5            # 9
        - 1.0            # 10
    roughness: [0.035, 0.030, 0.045] # 11
    slope: 0.002         # 12
)",
                   10, "breaks[1] = 1.0: breaks must increase: 1 is not greater than 3.5");
}

TEST_CASE("an unknown shape lists the shapes") {
  expect_one_error(
      R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: pond-outlet      # 4
    section:             # 5
      shape: oval        # 6
      width: 2.0         # 7
    roughness: 0.014     # 8
    slope: 0.001         # 9
)",
      6, "shape = oval: must be one of rectangular, trapezoidal, triangular, circular, surveyed");
}
