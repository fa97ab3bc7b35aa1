// Geometry of the regular shapes against closed forms, and the errors for invalid descriptions.
#include "stagewell/section.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <string>

#include "section_builders.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

std::unique_ptr<const Section> build(const SectionSpec& spec) {
  auto section = make_section(spec);
  REQUIRE_MESSAGE(section.has_value(), section.error().message);
  return std::move(*section);
}

// The error message for an invalid spec; fails the test if the spec is accepted.
std::string rejection(const SectionSpec& spec) {
  auto section = make_section(spec);
  REQUIRE_FALSE(section.has_value());
  CHECK(section.error().kind == ErrorKind::invalid_argument);
  return section.error().message;
}

constexpr double kExact = 1e-12;  // geometry is arithmetic: agree to rounding

}  // namespace

TEST_CASE("rectangular: A = b y, P = b + 2y, T = b, walls continue above the top") {
  // Closed form [C] (Chow 1959, table 2-1, from memory).
  SectionSpec spec;
  spec.shape = Shape::rectangular;
  spec.width = 2.5;
  spec.height = 1.2;
  const auto section = build(spec);
  CHECK(section->top_depth() == 1.2);
  CHECK_FALSE(section->closed());
  for (const double y : {0.01, 0.4, 1.2, 1.7}) {
    const Geometry g = section->geometry(y);
    CHECK(g.area == doctest::Approx(2.5 * y).epsilon(kExact));
    CHECK(g.wetted_perimeter == doctest::Approx(2.5 + 2.0 * y).epsilon(kExact));
    CHECK(g.top_width == doctest::Approx(2.5).epsilon(kExact));
  }
}

TEST_CASE("trapezoidal with unequal side slopes") {
  // Closed form [C]: A = y (b + (m1 + m2) y / 2), P = b + y (sqrt(1 + m1^2) + sqrt(1 + m2^2)),
  // T = b + (m1 + m2) y.
  const double b = 3.0, m1 = 2.0, m2 = 1.5, height = 2.0;
  const auto section = build(trapezoid(b, m1, m2, height));
  for (const double y : {0.05, 0.8, 2.0}) {
    const Geometry g = section->geometry(y);
    CHECK(g.area == doctest::Approx(y * (b + (m1 + m2) * y / 2.0)).epsilon(kExact));
    CHECK(
        g.wetted_perimeter ==
        doctest::Approx(b + y * (std::sqrt(1 + m1 * m1) + std::sqrt(1 + m2 * m2))).epsilon(kExact));
    CHECK(g.top_width == doctest::Approx(b + (m1 + m2) * y).epsilon(kExact));
  }
  SUBCASE("above the top the walls are vertical at the top width") {
    // Closed form [C]: the trapezoid full to its top plus a rectangle T_top wide.
    const double top_width = b + (m1 + m2) * height;
    const double extra = 0.6;
    const Geometry g = section->geometry(height + extra);
    CHECK(g.area == doctest::Approx(height * (b + (m1 + m2) * height / 2.0) + top_width * extra)
                        .epsilon(kExact));
    CHECK(g.wetted_perimeter ==
          doctest::Approx(b + height * (std::sqrt(5.0) + std::sqrt(3.25)) + 2.0 * extra)
              .epsilon(kExact));
    CHECK(g.top_width == doctest::Approx(top_width).epsilon(kExact));
  }
}

TEST_CASE("triangular, including a vertical side (a gutter)") {
  // Closed form [C]: A = (m1 + m2) y^2 / 2, P = y (sqrt(1 + m1^2) + sqrt(1 + m2^2)).
  SectionSpec spec;
  spec.shape = Shape::triangular;
  spec.side_slope_left = 12.0;
  spec.side_slope_right = 0.0;
  spec.height = 0.15;
  const auto section = build(spec);
  const double y = 0.1;
  const Geometry g = section->geometry(y);
  CHECK(g.area == doctest::Approx(6.0 * y * y).epsilon(kExact));
  CHECK(g.wetted_perimeter == doctest::Approx(y * (std::sqrt(145.0) + 1.0)).epsilon(kExact));
  CHECK(g.top_width == doctest::Approx(12.0 * y).epsilon(kExact));
}

TEST_CASE("a dry section has no geometry") {
  const auto section = build(trapezoid(3.0, 2.0, 2.0, 1.0));
  for (const double y : {0.0, -0.5}) {
    const Geometry g = section->geometry(y);
    CHECK(g.area == 0.0);
    CHECK(g.wetted_perimeter == 0.0);
    CHECK(g.top_width == 0.0);
  }
}

TEST_CASE("circular: elements at half full") {
  // Closed form [C]: A = pi D^2 / 8, P = pi D / 2, R = D / 4, T = D.
  const double d = 0.9;
  const auto section = build(circle(d));
  CHECK(section->closed());
  CHECK(section->top_depth() == d);
  const Geometry g = section->geometry(d / 2.0);
  CHECK(g.area == doctest::Approx(std::numbers::pi * d * d / 8.0).epsilon(kExact));
  CHECK(g.wetted_perimeter == doctest::Approx(std::numbers::pi * d / 2.0).epsilon(kExact));
  CHECK(g.top_width == doctest::Approx(d).epsilon(kExact));
}

TEST_CASE("circular: table of geometric elements") {
  // y/D, A/D^2, P/D, R/D, T/D. Closed form [C]: theta = 2 arccos(1 - 2y/D),
  // A = D^2 (theta - sin theta)/8, P = D theta/2, T = D sin(theta/2); the same figures as the
  // table of geometric elements of circular sections in Chow, "Open-Channel Hydraulics" (1959),
  // appendix A (from memory). Printed to 6 decimals: checked to half a unit in the last place.
  struct Row {
    double depth, area, perimeter, radius, top;
  };
  const Row rows[] = {
      {0.10, 0.040875, 0.643501, 0.063520, 0.600000},
      {0.25, 0.153546, 1.047198, 0.146626, 0.866025},
      {0.50, 0.392699, 1.570796, 0.250000, 1.000000},
      {0.75, 0.631852, 2.094395, 0.301687, 0.866025},
      {0.90, 0.744523, 2.498092, 0.298037, 0.600000},
  };
  const double d = 2.0;  // any diameter: the table is dimensionless
  const auto section = build(circle(d));
  for (const Row& row : rows) {
    CAPTURE(row.depth);
    const Geometry g = section->geometry(row.depth * d);
    CHECK(std::abs(g.area / (d * d) - row.area) <= 5e-7);
    CHECK(std::abs(g.wetted_perimeter / d - row.perimeter) <= 5e-7);
    CHECK(std::abs(g.area / g.wetted_perimeter / d - row.radius) <= 5e-7);
    CHECK(std::abs(g.top_width / d - row.top) <= 5e-7);
  }
}

TEST_CASE("circular: exact at very small depths and near the crown") {
  // Closed form [C], series of the formulas above for small y/D (D = 1):
  //   A = (4/3) y^(3/2) (1 - 3y/10 + O(y^2)),  P = 2 sqrt(y) (1 + y/6 + O(y^2)).
  // Near the crown the empty part is the mirror image: A = pi/4 - A(e), P = pi - P(e), e = D - y.
  const auto section = build(circle(1.0));
  const double y = 1e-8;
  const Geometry g = section->geometry(y);
  CHECK(g.area == doctest::Approx(4.0 / 3.0 * std::pow(y, 1.5) * (1.0 - 0.3 * y)).epsilon(1e-12));
  CHECK(g.wetted_perimeter == doctest::Approx(2.0 * std::sqrt(y) * (1.0 + y / 6.0)).epsilon(1e-12));
  const double depth = 1.0 - y;
  const double e = 1.0 - depth;  // exact (Sterbenz): the empty height the section sees
  const Geometry near_crown = section->geometry(depth);
  CHECK(near_crown.area ==
        doctest::Approx(std::numbers::pi / 4.0 - 4.0 / 3.0 * std::pow(e, 1.5)).epsilon(1e-14));
  CHECK(near_crown.wetted_perimeter ==
        doctest::Approx(std::numbers::pi - 2.0 * std::sqrt(e) * (1.0 + e / 6.0)).epsilon(1e-14));
  CHECK(near_crown.top_width == doctest::Approx(2.0 * std::sqrt(e * depth)).epsilon(1e-12));
}

TEST_CASE("circular: above the crown the pipe is full") {
  // Closed form [C]: A = pi D^2 / 4, P = pi D, no free surface.
  const auto section = build(circle(0.6));
  for (const double y : {0.6, 0.7, 5.0}) {
    const Geometry g = section->geometry(y);
    CHECK(g.area == doctest::Approx(std::numbers::pi * 0.09).epsilon(kExact));
    CHECK(g.wetted_perimeter == doctest::Approx(std::numbers::pi * 0.6).epsilon(kExact));
    CHECK(g.top_width == 0.0);
  }
}

TEST_CASE("breakpoints of the regular shapes: the top") {
  CHECK(build(trapezoid(1.0, 1.0, 1.0, 0.75))->breakpoints() == std::vector<double>{0.75});
  CHECK(build(circle(1.5))->breakpoints() == std::vector<double>{1.5});
}

TEST_CASE("invalid regular sections are refused with a sentence naming the field") {
  SectionSpec rectangle;
  rectangle.shape = Shape::rectangular;
  rectangle.width = -2.0;
  rectangle.height = 1.0;
  CHECK(rejection(rectangle).find("width") != std::string::npos);
  rectangle.width = 2.0;
  rectangle.height = 0.0;
  CHECK(rejection(rectangle).find("height") != std::string::npos);
  rectangle.height = std::nan("");
  CHECK(rejection(rectangle).find("height") != std::string::npos);

  CHECK(rejection(trapezoid(0.0, 1.0, 1.0, 1.0)).find("bottom width") != std::string::npos);
  CHECK(rejection(trapezoid(1.0, -1.0, 1.0, 1.0)).find("left side slope") != std::string::npos);
  CHECK(rejection(trapezoid(1.0, 1.0, INFINITY, 1.0)).find("right side slope") !=
        std::string::npos);

  SectionSpec flat;
  flat.shape = Shape::triangular;
  flat.height = 1.0;
  CHECK(rejection(flat).find("side slopes") != std::string::npos);

  CHECK(rejection(circle(0.0)).find("diameter") != std::string::npos);
  CHECK(rejection(circle(-1.0)).back() == '.');  // one complete sentence
}

TEST_CASE("shape names") {
  // The spellings of the configuration's `shape` key.
  CHECK(name(Shape::rectangular) == "rectangular");
  CHECK(name(Shape::trapezoidal) == "trapezoidal");
  CHECK(name(Shape::triangular) == "triangular");
  CHECK(name(Shape::circular) == "circular");
  CHECK(name(Shape::surveyed) == "surveyed");
}
