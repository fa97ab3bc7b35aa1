// Good configurations: the shipped reference and demo files load, defaults are those of the
// configuration contract (config.hpp, config/reference.yaml), and relative paths resolve against
// the configuration's directory.
#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "config_test_support.hpp"

using namespace stagewell;
using stagewell::test::listing;
using stagewell::test::yaml_text;

namespace {

const std::filesystem::path kSource = STAGEWELL_SOURCE_DIR;
const std::filesystem::path kTestData = STAGEWELL_TEST_DATA;

Config loaded(std::string_view text) {
  auto result = parse_config(yaml_text(text), "test.yaml", "/srv/flows/config");
  INFO((result ? std::string("(loaded)") : listing(result.error())));
  REQUIRE(result.has_value());
  return *result;
}

}  // namespace

TEST_CASE("config/reference.yaml loads without errors") {
  const auto result = load_config(kSource / "config/reference.yaml");
  INFO((result ? std::string("(loaded)") : listing(result.error())));
  REQUIRE(result.has_value());
  // The reference shows every shape, so that every section key is documented in a file that loads.
  std::vector<Shape> shapes;
  for (const auto& site : result->sites) shapes.push_back(site.section.shape);
  for (const Shape shape : {Shape::rectangular, Shape::trapezoidal, Shape::triangular,
                            Shape::circular, Shape::surveyed}) {
    CHECK(std::find(shapes.begin(), shapes.end(), shape) != shapes.end());
  }
  CHECK(result->sources.size() == 2);
  CHECK(result->log.file.has_value());
}

TEST_CASE("config/reference.yaml documents every key of the configuration contract") {
  // The key names of the contract (config.hpp); each must appear as a key in the reference.
  std::ifstream in(kSource / "config/reference.yaml");
  std::stringstream text;
  text << in.rdbuf();
  for (const char* key :
       {"units",     "database",       "timezone",   "log",          "file",      "level",
        "sources",   "type",           "path",       "site",         "columns",   "time",
        "stage",     "time_zone",      "sites",      "id",           "name",      "section",
        "shape",     "width",          "side_slope", "diameter",     "points",    "breaks",
        "height",    "roughness",      "slope",      "offset",       "zero_flow", "checks",
        "min_stage", "max_stage",      "spike",      "spike_window", "max_rate",  "flatline",
        "max_gap",   "max_clock_skew", "stage_units", "warehouse", "postgresql", "password_file",
        "schema",    "plant"}) {
    CAPTURE(key);
    // Written as a key ("key:"), and named in a comment line that explains it.
    CHECK(text.str().find(std::string(key) + ":") != std::string::npos);
    bool explained = false;
    std::istringstream lines(text.str());
    for (std::string line; std::getline(lines, line);) {
      const auto start = line.find_first_not_of(' ');
      if (start != std::string::npos && line[start] == '#' && line.find(key) != std::string::npos) {
        explained = true;
      }
    }
    CHECK(explained);
  }
}

TEST_CASE("config/demo.yaml loads and is the scenario it describes") {
  const auto result = load_config(kSource / "config/demo.yaml");
  INFO((result ? std::string("(loaded)") : listing(result.error())));
  REQUIRE(result.has_value());
  const Config& demo = *result;
  CHECK(demo.units == units::System::metric);
  CHECK(demo.timezone == "America/Denver");
  // Relative to config/, where the file is.
  CHECK(demo.database == (kSource / "var/demo/stagewell.db").lexically_normal());
  REQUIRE(demo.log.file.has_value());
  CHECK(*demo.log.file == (kSource / "var/demo/stagewell.log").lexically_normal());
  // The drop folder, the raceway logger's file and the radio gateway's file of the other sites
  // (deploy/make_demo_data.py writes all three).
  REQUIRE(demo.sources.size() == 3);
  CHECK(demo.sources[0].type == SourceSpec::Type::directory);
  CHECK(demo.sources[0].path == (kSource / "var/demo/incoming").lexically_normal());
  CHECK(demo.sources[1].type == SourceSpec::Type::tail);
  CHECK(demo.sources[1].path == (kSource / "var/demo/logger/raceway-a.csv").lexically_normal());
  CHECK(demo.sources[1].site == "raceway-a");
  CHECK(demo.sources[2].type == SourceSpec::Type::tail);
  CHECK(demo.sources[2].path == (kSource / "var/demo/logger/telemetry.csv").lexically_normal());
  CHECK(!demo.sources[2].site.has_value());  // its site column says whose each reading is

  REQUIRE(demo.sites.size() == 5);
  CHECK(demo.find_site("raceway-a") != nullptr);
  int surveyed_with_three_n = 0;
  for (const auto& site : demo.sites) {
    CAPTURE(site.id);
    // Every demo site has plausible stage bounds that fit its section.
    REQUIRE(site.checks.min_stage.has_value());
    REQUIRE(site.checks.max_stage.has_value());
    CHECK(*site.checks.min_stage < *site.checks.max_stage);
    if (site.section.shape == Shape::surveyed && site.section.breaks.size() == 2 &&
        site.roughness.size() == 3) {
      ++surveyed_with_three_n;
    }
  }
  CHECK(surveyed_with_three_n == 1);
}

TEST_CASE("defaults of the contract are applied") {
  const Config config = loaded(R"(
units: metric
database: flows.db
sites:
  - id: pond-outlet
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
)");
  CHECK(config.timezone == "UTC");
  CHECK(config.log.level == "info");
  CHECK_FALSE(config.log.file.has_value());
  CHECK(config.sources.empty());
  REQUIRE(config.sites.size() == 1);
  const SiteConfig& site = config.sites[0];
  CHECK(site.name == "pond-outlet");  // the id, when no name is given
  CHECK(site.line == 4);
  CHECK(site.stage.units == units::Length::m);
  CHECK(site.stage.offset == 0.0);
  CHECK(site.stage.zero_flow == 0.0);
  CHECK_FALSE(site.checks.min_stage.has_value());
  CHECK_FALSE(site.checks.max_stage.has_value());
  CHECK_FALSE(site.checks.spike.has_value());
  CHECK_FALSE(site.checks.max_rate.has_value());
  CHECK(site.checks.spike_window == 3);
  CHECK(site.checks.flatline_s == 6 * 3600.0);   // 6h
  CHECK(site.checks.max_gap_s == 3600.0);        // 1h
  CHECK(site.checks.max_clock_skew_s == 300.0);  // 5m
}

TEST_CASE("US units: stage readings default to feet") {
  const Config config = loaded(R"(
units: us
database: flows.db
sites:
  - id: pond-outlet
    section: {shape: circular, diameter: 3.0}
    roughness: 0.013
    slope: 0.002
)");
  CHECK(config.units == units::System::us);
  CHECK(config.sites[0].stage.units == units::Length::ft);
}

TEST_CASE("every key is read into its field") {
  const Config config = loaded(R"(
units: metric
database: /var/lib/flows/flows.db
timezone: "-07:00"
log: {file: ../log/flows.log, level: debug}
sites:
  - id: feeder
    name: Feeder canal
    section: {shape: trapezoidal, width: 1.5, side_slope: [1.5, 2], height: 1.1}
    roughness: 0.022
    slope: 0.0004
    stage: {units: cm, offset: 1.5, zero_flow: 4}
    checks: {min_stage: 0, max_stage: 120, spike: 15, spike_window: 5, max_rate: 30,
             flatline: 1h30m, max_gap: 20m, max_clock_skew: 90s}
  - id: creek
    section:
      shape: surveyed
      points: [[0.0, 2.1], [0.8, 0.2], [2.5, 0.0], [4.0, 2.0]]
      breaks: [1.0, 3.5]
    roughness: 0.035
    slope: 0.002
sources:
  - type: tail
    path: logger/feeder.csv
    site: feeder
    columns: {time: timestamp, stage: level_cm}
    time_zone: Z
    stage_units: mm
)");
  CHECK(config.database == "/var/lib/flows/flows.db");
  CHECK(config.timezone == "-07:00");
  CHECK(config.log.file == "/srv/flows/log/flows.log");
  CHECK(config.log.level == "debug");
  REQUIRE(config.sites.size() == 2);
  const SiteConfig& feeder = config.sites[0];
  CHECK(feeder.name == "Feeder canal");
  CHECK(feeder.section.shape == Shape::trapezoidal);
  CHECK(feeder.section.width == 1.5);
  CHECK(feeder.section.side_slope_left == 1.5);
  CHECK(feeder.section.side_slope_right == 2.0);
  CHECK(feeder.section.height == 1.1);
  CHECK(feeder.roughness == std::vector<double>{0.022});
  CHECK(feeder.slope == 0.0004);
  CHECK(feeder.stage.units == units::Length::cm);
  CHECK(feeder.stage.offset == 1.5);
  CHECK(feeder.stage.zero_flow == 4.0);
  CHECK(feeder.checks.min_stage == 0.0);
  CHECK(feeder.checks.max_stage == 120.0);
  CHECK(feeder.checks.spike == 15.0);
  CHECK(feeder.checks.spike_window == 5);
  CHECK(feeder.checks.max_rate == 30.0);
  CHECK(feeder.checks.flatline_s == 5400.0);
  CHECK(feeder.checks.max_gap_s == 1200.0);
  CHECK(feeder.checks.max_clock_skew_s == 90.0);

  const SiteConfig& creek = config.sites[1];
  REQUIRE(creek.section.points.size() == 4);
  CHECK(creek.section.points[1] == std::pair{0.8, 0.2});
  CHECK(creek.section.breaks == std::vector<double>{1.0, 3.5});
  // One n for the three subsections (breaks + 1).
  CHECK(creek.roughness == std::vector<double>{0.035, 0.035, 0.035});

  REQUIRE(config.sources.size() == 1);
  const SourceSpec& source = config.sources[0];
  CHECK(source.type == SourceSpec::Type::tail);
  CHECK(source.path == "/srv/flows/config/logger/feeder.csv");
  CHECK(source.site == "feeder");
  CHECK(source.columns.time == "timestamp");
  CHECK(source.columns.stage == "level_cm");
  CHECK(source.time_zone == "Z");
  CHECK(source.stage_units == units::Length::mm);
  CHECK(source.line == 22);
}

TEST_CASE("relative paths resolve against the configuration file's directory") {
  const auto result = load_config(kTestData / "config/relative_paths.yaml");
  INFO((result ? std::string("(loaded)") : listing(result.error())));
  REQUIRE(result.has_value());
  const std::filesystem::path dir = (kTestData / "config").lexically_normal();
  CHECK(result->file == (dir / "relative_paths.yaml"));
  CHECK(result->database == dir / "state/flows.db");
  CHECK(result->log.file == (kTestData / "logs/flows.log").lexically_normal());
  REQUIRE(result->sources.size() == 1);
  CHECK(result->sources[0].path == "/srv/incoming");  // absolute: kept
}

TEST_CASE("errors from a file name the file") {
  const auto result = load_config(kTestData / "config/bad_width.yaml");
  REQUIRE_FALSE(result.has_value());
  REQUIRE(result.error().size() == 1);
  CHECK(result.error()[0].to_string() ==
        (kTestData / "config/bad_width.yaml").string() +
            ":9:14: sites[0].section.width = -1.2: must be greater than 0");
}

TEST_CASE("a file that cannot be opened is one error without a line") {
  const auto result = load_config(kTestData / "config/no_such_file.yaml");
  REQUIRE_FALSE(result.has_value());
  REQUIRE(result.error().size() == 1);
  CHECK(result.error()[0].line == 0);
  CHECK(result.error()[0].to_string().starts_with(
      (kTestData / "config/no_such_file.yaml").string() + ": cannot open: "));
}
