// Surveyed sections against hand computation. Where the water is not a textbook shape, the wet
// area is computed here independently as a polygon (shoelace formula) whose vertices are the
// shore points and the submerged survey points, worked out by hand for each case; the wetted
// perimeter is the length of that polygon's ground edges [C].
#include <doctest/doctest.h>

#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "stagewell/section.hpp"

using namespace stagewell;

namespace {

using Points = std::vector<std::pair<double, double>>;

std::unique_ptr<const Section> surveyed(Points points, std::vector<double> breaks = {}) {
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = std::move(points);
  spec.breaks = std::move(breaks);
  auto section = make_section(spec);
  REQUIRE_MESSAGE(section.has_value(), section.error().message);
  return std::move(*section);
}

std::string rejection(Points points, std::vector<double> breaks = {}) {
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = std::move(points);
  spec.breaks = std::move(breaks);
  auto section = make_section(spec);
  REQUIRE_FALSE(section.has_value());
  CHECK(section.error().kind == ErrorKind::invalid_argument);
  return section.error().message;
}

// A pool of water: vertices from the left shore along the ground to the right shore, both shores
// on the water surface.
struct Pool {
  Points vertices;
  double area() const {  // shoelace, closing along the surface
    double twice = 0.0;
    for (std::size_t i = 0; i < vertices.size(); ++i) {
      const auto [x0, z0] = vertices[i];
      const auto [x1, z1] = vertices[(i + 1) % vertices.size()];
      twice += x0 * z1 - x1 * z0;
    }
    return std::abs(twice) / 2.0;
  }
  double ground_length() const {
    double length = 0.0;
    for (std::size_t i = 1; i < vertices.size(); ++i) {
      length += std::hypot(vertices[i].first - vertices[i - 1].first,
                           vertices[i].second - vertices[i - 1].second);
    }
    return length;
  }
  double surface_width() const { return vertices.back().first - vertices.front().first; }
};

void check_pools(const Geometry& g, const std::vector<Pool>& pools) {
  double area = 0.0, perimeter = 0.0, width = 0.0;
  for (const Pool& pool : pools) {
    area += pool.area();
    perimeter += pool.ground_length();
    width += pool.surface_width();
  }
  CHECK(g.area == doctest::Approx(area).epsilon(1e-12));
  CHECK(g.wetted_perimeter == doctest::Approx(perimeter).epsilon(1e-12));
  CHECK(g.top_width == doctest::Approx(width).epsilon(1e-12));
}

}  // namespace

TEST_CASE("a rectangle drawn with vertical walls gives the rectangle's closed form") {
  // Closed form [C]: A = b y, P = b + 2y, T = b; elevations need not start at 0.
  const auto section = surveyed({{10.0, 101.2}, {10.0, 100.0}, {12.5, 100.0}, {12.5, 101.5}});
  CHECK(section->top_depth() == doctest::Approx(1.2).epsilon(1e-12));  // the lower bank
  for (const double y : {0.3, 1.2, 1.35, 2.0}) {
    CAPTURE(y);
    const Geometry g = section->geometry(y);
    CHECK(g.area == doctest::Approx(2.5 * y).epsilon(1e-12));
    CHECK(g.wetted_perimeter == doctest::Approx(2.5 + 2.0 * y).epsilon(1e-12));
    CHECK(g.top_width == doctest::Approx(2.5).epsilon(1e-12));
  }
}

TEST_CASE("a trapezoid drawn by its corners gives the trapezoid's closed form") {
  // Closed form [C]: b = 3, side slopes 2 and 1.5 (H:V), 2 deep.
  const auto section = surveyed({{0.0, 52.0}, {4.0, 50.0}, {7.0, 50.0}, {10.0, 52.0}});
  for (const double y : {0.01, 0.7, 1.999, 2.0}) {
    CAPTURE(y);
    const Geometry g = section->geometry(y);
    CHECK(g.area == doctest::Approx(y * (3.0 + 3.5 * y / 2.0)).epsilon(1e-12));
    CHECK(g.wetted_perimeter ==
          doctest::Approx(3.0 + y * (std::sqrt(5.0) + std::sqrt(3.25))).epsilon(1e-12));
    CHECK(g.top_width == doctest::Approx(3.0 + 3.5 * y).epsilon(1e-12));
  }
}

TEST_CASE("sloping segments are clipped exactly at the water level") {
  // Water at 1.5 above the lowest point (hand computation): the left shore is on the segment
  // (0,3)-(2,1) at x = 1.5, the right shore on (3,0)-(6,2) at x = 3 + 1.5 x 1.5 = 5.25.
  const auto section = surveyed({{0, 3}, {2, 1}, {3, 0}, {6, 2}, {8, 4}});
  check_pools(section->geometry(1.5), {Pool{{{1.5, 1.5}, {2, 1}, {3, 0}, {5.25, 1.5}}}});
}

TEST_CASE("separate pools: the water surface is level across the section") {
  // A hump at elevation 2 between a pool with its bottom at 0 and one with its bottom at 1.
  const auto section = surveyed({{0, 4}, {2, 0}, {4, 2}, {6, 1}, {8, 4}});
  SUBCASE("below the second pool's bottom only the first holds water") {
    // Shores at x = 2 - 0.9/2 and x = 2 + 0.9 (hand computation).
    check_pools(section->geometry(0.9), {Pool{{{1.55, 0.9}, {2, 0}, {2.9, 0.9}}}});
  }
  SUBCASE("both pools hold water, the hump stays dry") {
    // Level 1.5: first pool's shores at x = 1.25 and 3.5; second pool's at x = 5 (on (4,2)-(6,1))
    // and x = 6 + 2 x 0.5/3 (on (6,1)-(8,4)).
    check_pools(section->geometry(1.5), {Pool{{{1.25, 1.5}, {2, 0}, {3.5, 1.5}}},
                                         Pool{{{5.0, 1.5}, {6, 1}, {6.0 + 1.0 / 3.0, 1.5}}}});
  }
  SUBCASE("above the hump they join") {
    check_pools(section->geometry(3.0),
                {Pool{{{0.5, 3.0}, {2, 0}, {4, 2}, {6, 1}, {8.0 - 2.0 / 3.0, 3.0}}}});
  }
  CHECK(section->breakpoints() == std::vector<double>{1.0, 2.0, 4.0});
}

TEST_CASE("vertical walls inside the section") {
  // A step: bottom 2 wide at 0, a wall at x = 2 up to a shelf 3 wide at 1 (hand computation).
  const auto section = surveyed({{0, 3}, {0, 0}, {2, 0}, {2, 1}, {5, 1}, {5, 3}});
  const Geometry low = section->geometry(0.5);
  CHECK(low.area == doctest::Approx(1.0).epsilon(1e-12));              // 2 x 0.5
  CHECK(low.wetted_perimeter == doctest::Approx(3.0).epsilon(1e-12));  // 0.5 + 2 + 0.5
  CHECK(low.top_width == doctest::Approx(2.0).epsilon(1e-12));
  const Geometry high = section->geometry(1.5);
  CHECK(high.area == doctest::Approx(4.5).epsilon(1e-12));              // 2 x 1.5 + 3 x 0.5
  CHECK(high.wetted_perimeter == doctest::Approx(8.0).epsilon(1e-12));  // 1.5 + 2 + 1 + 3 + 0.5
  CHECK(high.top_width == doctest::Approx(5.0).epsilon(1e-12));
  CHECK(section->breakpoints() == std::vector<double>{1.0, 3.0});
}

TEST_CASE("a level bench exactly at the water level is dry; just above, it is wet") {
  // Main channel 2 wide at the bottom, sides at 1:2 (H:V) up to benches 4 long at elevation 2,
  // vertical walls to 3 (hand computation).
  const auto section = surveyed({{0, 3}, {0, 2}, {4, 2}, {5, 0}, {7, 0}, {8, 2}, {12, 2}, {12, 3}});
  const Geometry at = section->geometry(2.0);
  CHECK(at.area == doctest::Approx(6.0).epsilon(1e-12));  // (2 + 4)/2 x 2
  CHECK(at.wetted_perimeter == doctest::Approx(2.0 + 2.0 * std::sqrt(5.0)).epsilon(1e-12));
  CHECK(at.top_width == doctest::Approx(4.0).epsilon(1e-12));
  const Geometry above = section->geometry(2.5);
  CHECK(above.area == doctest::Approx(6.0 + 12.0 * 0.5).epsilon(1e-12));
  CHECK(above.wetted_perimeter ==
        doctest::Approx(2.0 + 2.0 * std::sqrt(5.0) + 8.0 + 2.0 * 0.5).epsilon(1e-12));
  CHECK(above.top_width == doctest::Approx(12.0).epsilon(1e-12));
}

TEST_CASE("above the lower bank, vertical walls rise from the end points") {
  // Left bank at 5, right bank at 4: top depth 4. At 4.5 the water is held on the right by a
  // wall standing on (10, 4), and meets the left slope at x = 0.5 (hand computation).
  const auto section = surveyed({{0, 5}, {5, 0}, {10, 4}});
  CHECK(section->top_depth() == 4.0);
  check_pools(section->geometry(4.5), {Pool{{{0.5, 4.5}, {5, 0}, {10, 4}, {10, 4.5}}}});
}

TEST_CASE("subsections: breaks split the section and the dividing verticals add no perimeter") {
  // A main channel 4 wide and 2 deep between floodplains 10 wide, walls at the ends up to 3;
  // breaks at the main channel's edges, on its walls (hand computation at depth 2.6).
  const auto section = surveyed(
      {{0, 3}, {0, 2}, {10, 2}, {10, 0}, {14, 0}, {14, 2}, {24, 2}, {24, 3}}, {10.0, 14.0});
  REQUIRE(section->subsection_count() == 3);
  std::vector<Geometry> parts(3);
  section->subsections(2.6, parts);
  // Floodplains: 10 x 0.6 of water; bed 10 plus the end wall's wet 0.6.
  for (const std::size_t i : {std::size_t{0}, std::size_t{2}}) {
    CAPTURE(i);
    CHECK(parts[i].area == doctest::Approx(6.0).epsilon(1e-12));
    CHECK(parts[i].wetted_perimeter == doctest::Approx(10.6).epsilon(1e-12));
    CHECK(parts[i].top_width == doctest::Approx(10.0).epsilon(1e-12));
  }
  // Main channel: 4 x 2.6; bed 4 plus both walls 2 high, nothing above them.
  CHECK(parts[1].area == doctest::Approx(10.4).epsilon(1e-12));
  CHECK(parts[1].wetted_perimeter == doctest::Approx(8.0).epsilon(1e-12));
  CHECK(parts[1].top_width == doctest::Approx(4.0).epsilon(1e-12));
}

TEST_CASE("a break inside a sloping segment splits it on the ground line") {
  // V section (0,2)-(2,0)-(4,2) with a break at x = 1: at depth 1.5 the left subsection holds
  // the water left of x = 1, where the ground is at 1 (hand computation).
  const auto section = surveyed({{0, 2}, {2, 0}, {4, 2}}, {1.0});
  std::vector<Geometry> parts(2);
  section->subsections(1.5, parts);
  // Left: shore at x = 0.5, ground from (0.5,1.5) to (1,1), divider at x = 1.
  CHECK(parts[0].area == doctest::Approx(0.5 * 0.5 * 0.5).epsilon(1e-12));  // a triangle
  CHECK(parts[0].wetted_perimeter == doctest::Approx(std::sqrt(0.5)).epsilon(1e-12));
  CHECK(parts[0].top_width == doctest::Approx(0.5).epsilon(1e-12));
  // Right: polygon (1,1.5) (1,1) (2,0) (3.5,1.5), the edge on x = 1 being the divider.
  const double right_area = (0.5 + 1.5) / 2.0 * 1.0 + 1.5 * 1.5 / 2.0;  // x in [1,2], [2,3.5]
  CHECK(parts[1].area == doctest::Approx(right_area).epsilon(1e-12));
  CHECK(parts[1].wetted_perimeter ==
        doctest::Approx(std::sqrt(2.0) + 1.5 * std::sqrt(2.0)).epsilon(1e-12));
  CHECK(parts[1].top_width == doctest::Approx(2.5).epsilon(1e-12));
  // The whole section is the plain V: A = y^2, P = 2 sqrt(2) y, T = 2y (closed form [C]).
  const Geometry whole = section->geometry(1.5);
  CHECK(whole.area == doctest::Approx(2.25).epsilon(1e-12));
  CHECK(whole.wetted_perimeter == doctest::Approx(3.0 * std::sqrt(2.0)).epsilon(1e-12));
  CHECK(section->breakpoints() == std::vector<double>{1.0, 2.0});  // the inserted point at 1
}

TEST_CASE("invalid surveyed sections are refused with one sentence") {
  CHECK(rejection({{0, 2}, {1, 0}}).find("at least 3") != std::string::npos);
  CHECK(rejection({{0, 2}, {1, NAN}, {2, 2}}).find("Point 2") != std::string::npos);
  CHECK(rejection({{0, 2}, {2, 0}, {1, 2}}).find("never decrease") != std::string::npos);
  CHECK(rejection({{0, 2}, {0, 0}, {0, 2}}).find("no width") != std::string::npos);
  CHECK(rejection({{0, 0}, {1, 1}, {2, 2}}).find("first point") != std::string::npos);
  CHECK(rejection({{0, 2}, {1, 1}, {2, 1}}).find("last point") != std::string::npos);
  const Points v{{0, 2}, {2, 0}, {4, 2}};
  CHECK(rejection(v, {0.0}).find("strictly between") != std::string::npos);
  CHECK(rejection(v, {4.5}).find("strictly between") != std::string::npos);
  CHECK(rejection(v, {2.0, 1.0}).find("increasing") != std::string::npos);
  std::vector<double> many;
  for (int i = 1; i <= static_cast<int>(max_subsections); ++i) many.push_back(0.2 * i);
  CHECK(rejection(v, many).find("breaks") != std::string::npos);
  many.pop_back();
  CHECK(
      make_section(SectionSpec{.shape = Shape::surveyed, .points = v, .breaks = many}).has_value());
}
