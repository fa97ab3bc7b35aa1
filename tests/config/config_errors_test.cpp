// Bad top levels, units, time zones and sources: each configuration has one mistake (unless
// said otherwise), which must be reported with its line and what is allowed.
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::has_error;
using stagewell::test::listing;

TEST_CASE("a YAML syntax error is reported with its line, and nothing else") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9 # 5
    roughness: 0.013     # 6
)",
                   // yaml-cpp notices the unclosed flow map where the next key starts.
                   6, "YAML syntax error");
}

TEST_CASE("a YAML syntax error: a key indented into the previous value") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
  sites: []              # 3
)");
  INFO(listing(errors));
  REQUIRE(errors.size() == 1);
  CHECK(errors[0].line == 3);
  CHECK(errors[0].message.starts_with("YAML syntax error: "));
}

TEST_CASE("text no YAML parser gets past is a syntax error, not a hang") {
  // A lone `,` (or one after a document) made yaml-cpp's LoadAll return empty documents forever,
  // growing memory without bound. ctest's timeout would catch a hang here.
  for (const char* text : {",", ",,", "units: metric\n,", "  ,\n"}) {
    CAPTURE(text);
    const auto errors = errors_of(text);
    INFO(listing(errors));
    REQUIRE(errors.size() == 1);
    CHECK(errors[0].message.starts_with("YAML syntax error"));
  }
}

TEST_CASE("a second YAML document is refused; so is text larger than any configuration") {
  const auto two = errors_of("units: metric\n---\nunits: us\n");
  REQUIRE(two.size() == 1);
  CHECK(two[0].message.find("more than one YAML document") != std::string::npos);

  // One byte over the limit, of harmless YAML (a comment): refused unread.
  std::string large = "# " + std::string(stagewell::kMaxConfigBytes - 1, 'x');
  const auto errors = errors_of(large);
  REQUIRE(errors.size() == 1);
  CHECK(errors[0].message.find("more than any configuration needs") != std::string::npos);

  // A file that never ends is read only up to the limit.
  const auto endless = stagewell::load_config("/dev/zero");
  REQUIRE_FALSE(endless.has_value());
  REQUIRE(endless.error().size() == 1);
  CHECK(endless.error()[0].message.find("more than any configuration needs") != std::string::npos);
}

TEST_CASE("unknown unit system") {
  expect_one_error(R"(
units: imperial          # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
)",
                   1, "units = imperial: must be one of metric, us");
}

TEST_CASE("units and database are required") {
  const auto errors = errors_of(R"(
sites:                   # 1
  - id: outlet           # 2
    section: {shape: circular, diameter: 0.9} # 3
    roughness: 0.013     # 4
    slope: 0.002         # 5
)");
  INFO(listing(errors));
  CHECK(errors.size() == 2);
  CHECK(has_error(errors, 1, "units: required key is missing"));
  CHECK(has_error(errors, 1, "database: required key is missing"));
}

TEST_CASE("an unknown IANA time zone") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
timezone: Mars/Olympus_Mons # 3
sites:                   # 4
  - id: outlet           # 5
    section: {shape: circular, diameter: 0.9} # 6
    roughness: 0.013     # 7
    slope: 0.002         # 8
)",
                   3, "timezone = Mars/Olympus_Mons: unknown time zone");
}

TEST_CASE("a fixed offset beyond +14:00, and a path, are not time zones") {
  for (const char* zone : {"\"+15:00\"", "\"7:00\"", "/etc/localtime", "localtime"}) {
    CAPTURE(zone);
    const std::string text = std::string(R"(
units: metric            # 1
database: flows.db       # 2
timezone: )") + zone + R"(
sites:                   # 4
  - id: outlet           # 5
    section: {shape: circular, diameter: 0.9} # 6
    roughness: 0.013     # 7
    slope: 0.002         # 8
)";
    expect_one_error(text, 3, "unknown time zone; write an IANA name");
  }
}

TEST_CASE("an unknown top-level key suggests the closest") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
time_zone: UTC           # 3
sites:                   # 4
  - id: outlet           # 5
    section: {shape: circular, diameter: 0.9} # 6
    roughness: 0.013     # 7
    slope: 0.002         # 8
)",
                   3, "time_zone: unknown key; did you mean `timezone`?");
}

TEST_CASE("an unknown source type") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: socket         # 9
    path: incoming       # 10
)",
                   9, "sources[0].type = socket: must be one of directory, tail");
}

TEST_CASE("a source naming a site that is not configured") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: tail           # 9
    path: logger/a.csv   # 10
    site: outlet-2       # 11
)",
                   11, "sources[0].site = outlet-2: no site has this id; the sites are: outlet");
}

TEST_CASE("two sources on the same path, written differently") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: directory      # 9
    path: incoming       # 10
  - type: directory      # 11
    path: ./incoming/    # 12
)",
                   12, "sources[1].path = ./incoming/: the same path as sources[0]");
}

TEST_CASE("a tail source inside a drop folder would be read twice") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: directory      # 9
    path: incoming       # 10
  - type: tail           # 11
    path: incoming/a.csv # 12
    site: outlet         # 13
)",
                   12, "lies in the drop folder of another source (sources[0])");
}

TEST_CASE("a source with a fixed site has no site column") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: tail           # 9
    path: logger/a.csv   # 10
    site: outlet         # 11
    columns: {site: station, time: t} # 12
)",
                   12,
                   "sources[0].columns.site = station: not used: this source has `site: outlet`");
}

TEST_CASE("a source's time zone is checked like the top-level one") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: directory      # 9
    path: incoming       # 10
    time_zone: Mountain  # 11
)",
                   11, "sources[0].time_zone = Mountain: unknown time zone");
}

TEST_CASE("a source's stage units are a length unit, as a site's are") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
sources:                 # 8
  - type: directory      # 9
    path: incoming       # 10
    stage_units: furlong # 11
)",
                   11, "sources[0].stage_units = furlong: unknown unit; choose one of");
}

TEST_CASE("an unknown log level") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
log: {level: verbose}    # 3
sites:                   # 4
  - id: outlet           # 5
    section: {shape: circular, diameter: 0.9} # 6
    roughness: 0.013     # 7
    slope: 0.002         # 8
)",
                   3, "log.level = verbose: must be one of trace, debug, info, warn, error");
}

TEST_CASE("sites written as a map instead of a list") {
  expect_one_error(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  outlet:                # 4
    section: {shape: circular, diameter: 0.9} # 5
)",
                   4, "sites = {outlet: ");
}

TEST_CASE("a list where a number is needed, and an empty value") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: [0.9]} # 5
    roughness:           # 6
    slope: 0.002         # 7
)");
  INFO(listing(errors));
  CHECK(errors.size() == 2);
  CHECK(has_error(errors, 5, "sites[0].section.diameter = [0.9]: must be a number, not a list"));
  CHECK(has_error(errors, 6, "sites[0].roughness: has no value; must be a number"));
}

TEST_CASE("the whole file: empty, not a map, or two documents") {
  CHECK(has_error(errors_of(""), 0, "the configuration is empty"));
  CHECK(has_error(errors_of("- units\n- sites\n"), 1, "must be a map of `key: value` lines"));
  CHECK(has_error(errors_of("units: metric\n---\nunits: us\n"), 0, "more than one YAML document"));
}

TEST_CASE("every error of a configuration is reported at once, in file order") {
  const auto errors = errors_of(R"(
units: metric            # 1
database: flows.db       # 2
timezone: Nowhere/Else   # 3
sites:                   # 4
  - id: raceway-a        # 5
    section:             # 6
      shape: rectangular # 7
      width: 0           # 8
      height: 1.2        # 9
      diamter: 0.9       # 10
    roughness: 1.4       # 11
    slope: 0.0015        # 12
  - id: creek            # 13
    section:             # 14
      shape: surveyed    # 15
      points: [[0, 2], [1, 0], [2, 0]] # 16
      breaks: [0.5, 2.5] # 17
    roughness: 0.035     # 18
    slope: -0.01         # 19
    checks: {max_gap: 0s} # 20
sources:                 # 21
  - type: tail           # 22
    path: logger/a.csv   # 23
    site: raceway-b      # 24
)");
  INFO(listing(errors));
  CHECK(has_error(errors, 3, "timezone = Nowhere/Else: unknown time zone"));
  CHECK(has_error(errors, 8, "sites[0].section.width = 0: must be greater than 0"));
  CHECK(has_error(errors, 10, "sites[0].section.diamter: unknown key; did you mean `diameter`?"));
  CHECK(has_error(errors, 11, "sites[0].roughness = 1.4: must be from 0.008 to 0.25"));
  CHECK(has_error(errors, 16, "the last point (elevation 0) is not higher than the lowest"));
  CHECK(has_error(errors, 19, "sites[1].slope = -0.01: must be greater than 0"));
  CHECK(has_error(errors, 20, "sites[1].checks.max_gap = 0s: must be greater than 0s"));
  CHECK(has_error(errors, 24, "sources[0].site = raceway-b: no site has this id"));
  CHECK(errors.size() == 8);
  for (std::size_t i = 1; i < errors.size(); ++i) CHECK(errors[i - 1].line <= errors[i].line);
}
