// make_channel: a configured site becomes a channel whose discharge is Manning's equation for the
// configured section, n and slope. Expected values are computed here from closed forms:
//   Q = (k/n) A R^(2/3) S^(1/2), R = A/P (Manning's equation; V. T. Chow, "Open-Channel
//   Hydraulics", 1959, ch. 5), k = 1 in SI units and (1 m / 0.3048 m)^(1/3) in US customary
//   units (exact from the definition of the international foot);
//   rectangle A = b y, P = b + 2y; trapezoid A = (b + z y) y, P = b + 2 y sqrt(1 + z^2);
//   triangle with sides z1, z2: A = (z1 + z2) y^2 / 2, P = y (sqrt(1 + z1^2) + sqrt(1 + z2^2));
//   circle half full: A = pi D^2 / 8, P = pi D / 2 (plane geometry).
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "config_test_support.hpp"

using namespace stagewell;
using stagewell::test::listing;
using stagewell::test::yaml_text;

namespace {

Config loaded(std::string_view text) {
  auto result = parse_config(yaml_text(text), "test.yaml", "/srv/flows");
  INFO((result ? std::string("(loaded)") : listing(result.error())));
  REQUIRE(result.has_value());
  return *result;
}

double manning(double k, double n, double area, double perimeter, double slope) {
  return k / n * area * std::pow(area / perimeter, 2.0 / 3.0) * std::sqrt(slope);
}

}  // namespace

TEST_CASE("each shape's channel carries what Manning's equation gives") {
  const Config config = loaded(R"(
units: metric
database: flows.db
sites:
  - id: raceway
    section: {shape: rectangular, width: 2.4, height: 1.2}
    roughness: 0.014
    slope: 0.0015
  - id: canal
    section: {shape: trapezoidal, width: 1.8, side_slope: 1.5, height: 1.3}
    roughness: 0.024
    slope: 0.0004
  - id: ditch
    section: {shape: triangular, side_slope: [2, 3], height: 0.6}
    roughness: 0.035
    slope: 0.006
  - id: culvert
    section: {shape: circular, diameter: 0.9}
    roughness: 0.013
    slope: 0.005
)");
  const double y = 0.45;  // m
  struct Case {
    const char* id;
    double area;
    double perimeter;
    double n;
    double slope;
  };
  const double pi = std::numbers::pi;
  const Case cases[] = {
      {"raceway", 2.4 * y, 2.4 + 2 * y, 0.014, 0.0015},
      {"canal", (1.8 + 1.5 * y) * y, 1.8 + 2 * y * std::sqrt(1 + 1.5 * 1.5), 0.024, 0.0004},
      {"ditch", (2.0 + 3.0) * y * y / 2, y * (std::sqrt(1 + 4.0) + std::sqrt(1 + 9.0)), 0.035,
       0.006},
      {"culvert", pi * 0.9 * 0.9 / 8, pi * 0.9 / 2, 0.013, 0.005},  // half full: y = D/2
  };
  for (const auto& c : cases) {
    CAPTURE(c.id);
    const SiteConfig* site = config.find_site(c.id);
    REQUIRE(site != nullptr);
    const auto channel = make_channel(*site, config.units);
    REQUIRE(channel != nullptr);
    CHECK(channel->slope() == c.slope);
    CHECK(channel->discharge(y) ==
          doctest::Approx(manning(1.0, c.n, c.area, c.perimeter, c.slope)).epsilon(1e-12));
  }
}

TEST_CASE("US units: the channel uses k = (1/0.3048)^(1/3)") {
  const Config config = loaded(R"(
units: us
database: flows.db
sites:
  - id: flume
    section: {shape: rectangular, width: 8.0, height: 4.0}
    roughness: 0.013
    slope: 0.001
)");
  const auto channel = make_channel(config.sites[0], config.units);
  REQUIRE(channel != nullptr);
  const double k = std::cbrt(1.0 / 0.3048);
  const double y = 1.5;  // ft
  CHECK(channel->discharge(y) ==
        doctest::Approx(manning(k, 0.013, 8.0 * y, 8.0 + 2 * y, 0.001)).epsilon(1e-12));
}

TEST_CASE("a single n for a surveyed section with breaks serves every subsection") {
  const Config config = loaded(R"(
units: metric
database: flows.db
sites:
  - id: creek
    section:
      shape: surveyed
      points: [[0.0, 2.1], [0.8, 0.2], [2.5, 0.0], [4.0, 2.0]]
      breaks: [1.0, 3.5]
    roughness: 0.035
    slope: 0.002
)");
  const auto channel = make_channel(config.sites[0], config.units);
  REQUIRE(channel != nullptr);
  CHECK(channel->section().subsection_count() == 3);
  CHECK(channel->roughness() == std::vector<double>{0.035, 0.035, 0.035});
}

TEST_CASE("every site of the demo and the reference makes a channel") {
  // Validation and make_section must agree: what loads must build.
  for (const char* file : {"config/demo.yaml", "config/reference.yaml"}) {
    CAPTURE(file);
    const auto config = load_config(std::filesystem::path(STAGEWELL_SOURCE_DIR) / file);
    INFO((config ? std::string("(loaded)") : listing(config.error())));
    REQUIRE(config.has_value());
    for (const auto& site : config->sites) {
      CAPTURE(site.id);
      const auto channel = make_channel(site, config->units);
      REQUIRE(channel != nullptr);
      CHECK(channel->roughness().size() == channel->section().subsection_count());
      CHECK(channel->discharge(0.5 * channel->section().top_depth()) > 0.0);
    }
  }
}
