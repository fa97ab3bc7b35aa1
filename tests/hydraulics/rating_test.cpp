// The rating table against Manning's equation written out in closed form (regular shapes) and
// against Channel::discharge (surveyed sections, whose geometry the surveyed-section tests check
// by hand). The bound promised in rating.hpp is 0.05 %; the tests hold it to 0.01 %.
#include "stagewell/rating.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <functional>
#include <numbers>
#include <utility>
#include <vector>

#include "section_builders.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

constexpr double kBound = 1e-4;  // 0.01 %

// Manning's equation written out [C], k = 1.
double manning(double n, double slope, double area, double perimeter) {
  return area * std::pow(area / perimeter, 2.0 / 3.0) * std::sqrt(slope) / n;
}

// 20,000 even depths over (0, top] and 10,000 spaced evenly in log(depth) from 1e-6 top to top.
std::vector<double> sample_depths(double top) {
  std::vector<double> depths;
  for (int i = 1; i <= 20000; ++i) depths.push_back(top * i / 20000.0);
  for (int i = 0; i < 10000; ++i) depths.push_back(top * std::pow(10.0, -6.0 + 6.0 * i / 10000.0));
  return depths;
}

// Largest relative difference between the table and `reference` over the sample depths.
double worst_error(const RatingTable& table, const std::function<double(double)>& reference) {
  double worst = 0.0;
  for (const double y : sample_depths(table.valid_depth())) {
    const double exact = reference(y);
    worst = std::max(worst, std::abs(table.discharge(y) - exact) / exact);
  }
  return worst;
}

// An invented natural section: 155 surveyed points with a deep thread, a level bench, vertical
// walls, an island between two pools, and five breaks.
SectionSpec many_point_section() {
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  auto& p = spec.points;
  p.emplace_back(0.0, 108.0);
  double station = 0.0;
  for (int i = 1; i < 150; ++i) {
    station += 0.4 + 0.3 * std::abs(std::sin(1.7 * i));
    double elevation = 101.0 + 5.0 * std::pow(std::abs(station - 40.0) / 40.0, 1.5) +
                       0.35 * std::sin(0.9 * i) + 0.2 * std::cos(2.3 * i);
    if (i >= 20 && i < 30) elevation = 104.0;                                // a level bench
    if (i == 60 || i == 90) p.emplace_back(station, p.back().second + 0.8);  // a wall up...
    if (i >= 100 && i < 106) elevation = 103.2 + 0.1 * (i - 100);            // an island
    p.emplace_back(station, elevation);
    if (i == 61 || i == 91) p.emplace_back(station, elevation - 0.6);  // ...and down
  }
  p.emplace_back(station + 1.0, 107.5);
  spec.breaks = {8.0, 25.0, 45.0, 60.0, 70.0};
  return spec;
}

}  // namespace

TEST_CASE("rectangular: within 0.01 % of Manning's equation at 30,000 depths") {
  SectionSpec spec;
  spec.shape = Shape::rectangular;
  spec.width = 3.0;
  spec.height = 2.0;
  const RatingTable table(channel(spec, {0.015}, 0.001));
  CHECK(table.valid_depth() == 2.0);
  CHECK(worst_error(table, [](double y) { return manning(0.015, 0.001, 3.0 * y, 3.0 + 2.0 * y); }) <
        kBound);
}

TEST_CASE("trapezoidal and triangular: within 0.01 %") {
  SectionSpec trapezoid;
  trapezoid.shape = Shape::trapezoidal;
  trapezoid.width = 1.5;
  trapezoid.side_slope_left = 2.0;
  trapezoid.side_slope_right = 3.0;
  trapezoid.height = 1.4;
  const RatingTable table(channel(trapezoid, {0.025}, 0.0004));
  CHECK(worst_error(table, [](double y) {
          return manning(0.025, 0.0004, y * (1.5 + 2.5 * y),
                         1.5 + y * (std::sqrt(5.0) + std::sqrt(10.0)));
        }) < kBound);

  SectionSpec gutter;
  gutter.shape = Shape::triangular;
  gutter.side_slope_left = 0.0;
  gutter.side_slope_right = 24.0;
  gutter.height = 0.15;
  const RatingTable gutter_table(channel(gutter, {0.016}, 0.02));
  CHECK(worst_error(gutter_table, [](double y) {
          return manning(0.016, 0.02, 12.0 * y * y, y * (1.0 + std::sqrt(577.0)));
        }) < kBound);
}

TEST_CASE("circular: within 0.01 %, and shaped like the pipe's discharge curve") {
  // Closed form [C]: theta = 2 arccos(1 - 2y/D), A = D^2 (theta - sin theta)/8, P = D theta/2.
  const double d = 0.6;
  SectionSpec spec;
  spec.shape = Shape::circular;
  spec.diameter = d;
  const RatingTable table(channel(spec, {0.013}, 0.003));
  const auto closed_form = [d](double y) {
    const double theta = 2.0 * std::acos(1.0 - 2.0 * y / d);
    return manning(0.013, 0.003, d * d * (theta - std::sin(theta)) / 8.0, d * theta / 2.0);
  };
  // The arccos form loses precision at small depths; the table is held to it above 1e-4 D.
  double worst = 0.0;
  for (const double y : sample_depths(d)) {
    if (y < 1e-4 * d) continue;
    worst = std::max(worst, std::abs(table.discharge(y) / closed_form(y) - 1.0));
  }
  CHECK(worst < kBound);
  // The discharge rises to a peak at y = 0.938 D and falls to the crown (White, "Fluid Mechanics",
  // eq. 10.20): the table must rise below the peak and fall above it, with no wiggles.
  double previous = 0.0;
  bool rising = true, falling = true;
  for (int i = 1; i <= 200000; ++i) {
    const double y = d * i / 200000.0;
    const double q = table.discharge(y);
    if (y < 0.93 * d && q < previous) rising = false;
    if (y > 0.946 * d && q > previous) falling = false;
    previous = q;
  }
  CHECK(rising);
  CHECK(falling);
}

TEST_CASE("surveyed, 155 points, 6 subsections: within 0.01 % of the direct formula") {
  const auto c = channel(many_point_section(), {0.05, 0.045, 0.035, 0.03, 0.04, 0.06}, 0.0012);
  const RatingTable table(c);
  CHECK(worst_error(table, [&](double y) { return c->discharge(y); }) < kBound);
  CHECK(table.knot_count() < 5000);  // small enough to stay in cache
}

TEST_CASE("a level bench: the table keeps the dip on both sides of it") {
  // Benches at elevation 2 (see the surveyed section tests): Manning's equation written out [C]
  // just at 2 (A = 6, P = 2 + 2 sqrt 5) and just above it (benches wet: P + 8).
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = {{0, 3}, {0, 2}, {4, 2}, {5, 0}, {7, 0}, {8, 2}, {12, 2}, {12, 3}};
  const RatingTable table(channel(spec, {0.03}, 0.001));
  CHECK(table.discharge(2.0) ==
        doctest::Approx(manning(0.03, 0.001, 6.0, 2.0 + 2.0 * std::sqrt(5.0))).epsilon(kBound));
  CHECK(table.discharge(2.0 + 1e-9) ==
        doctest::Approx(manning(0.03, 0.001, 6.0, 10.0 + 2.0 * std::sqrt(5.0))).epsilon(kBound));
}

TEST_CASE("outside the tabulated range: 0 when dry, the direct formula above the top") {
  SectionSpec spec;
  spec.shape = Shape::rectangular;
  spec.width = 2.0;
  spec.height = 1.0;
  const RatingTable table(channel(spec, {0.014}, 0.001));
  CHECK(table.discharge(0.0) == 0.0);
  CHECK(table.discharge(-0.2) == 0.0);
  CHECK(table.discharge(std::nan("")) == 0.0);
  // Closed form [C]: walls continue above the top, A = 2 y, P = 2 + 2 y.
  CHECK(table.discharge(1.7) == doctest::Approx(manning(0.014, 0.001, 3.4, 5.4)).epsilon(1e-12));
  CHECK(table.discharge(1e-9) ==
        doctest::Approx(manning(0.014, 0.001, 2e-9, 2.0 + 2e-9)).epsilon(1e-9));

  SectionSpec pipe;
  pipe.shape = Shape::circular;
  pipe.diameter = 0.5;
  const RatingTable pipe_table(channel(pipe, {0.013}, 0.001));
  // Closed form [C]: above the crown, the full pipe.
  CHECK(pipe_table.discharge(0.9) ==
        doctest::Approx(manning(0.013, 0.001, std::numbers::pi * 0.0625, std::numbers::pi * 0.5))
            .epsilon(1e-12));
}
