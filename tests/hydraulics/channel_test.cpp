// Manning's equation and the hydraulic state against closed forms and published figures.
#include "stagewell/channel.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <utility>
#include <vector>

#include "section_builders.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

// Manning's equation written out [C]: Q = (k/n) A R^(2/3) S^(1/2).
double manning(double k, double n, double area, double perimeter, double slope) {
  return k / n * area * std::pow(area / perimeter, 2.0 / 3.0) * std::sqrt(slope);
}

constexpr double kExact = 1e-12;
constexpr double kUsK = 1.4859185775;  // (1/0.3048)^(1/3) [C]; White eq. 10.17 prints 1.486

}  // namespace

TEST_CASE("rectangular channel, metric: Manning's equation") {
  // Closed form [C]: b = 4.5 m, y = 1.1 m: A = 4.95 m^2, P = 6.7 m; n = 0.014, S = 0.0008.
  const auto c = channel(rectangle(4.5, 2.0), {0.014}, 0.0008);
  const double expected = manning(1.0, 0.014, 4.95, 6.7, 0.0008);
  CHECK(c->discharge(1.1) == doctest::Approx(expected).epsilon(kExact));
  const HydraulicState s = c->at_depth(1.1);
  CHECK(s.discharge == doctest::Approx(expected).epsilon(kExact));
  CHECK(s.area == doctest::Approx(4.95).epsilon(kExact));
  CHECK(s.wetted_perimeter == doctest::Approx(6.7).epsilon(kExact));
  CHECK(s.hydraulic_radius == doctest::Approx(4.95 / 6.7).epsilon(kExact));
  CHECK(s.top_width == doctest::Approx(4.5).epsilon(kExact));
  CHECK(s.hydraulic_depth == doctest::Approx(1.1).epsilon(kExact));
  CHECK(s.velocity == doctest::Approx(expected / 4.95).epsilon(kExact));
  // Froude number of a rectangle: V / sqrt(g y), g = 9.80665 m/s^2 [C].
  CHECK(s.froude == doctest::Approx(expected / 4.95 / std::sqrt(9.80665 * 1.1)).epsilon(kExact));
  CHECK(s.flags.empty());
}

TEST_CASE("trapezoidal channel, US customary: k = 1.4859") {
  // Closed form [C]: b = 10 ft, side slopes 2:1, y = 3 ft: A = 48 ft^2, P = 10 + 6 sqrt(5) ft;
  // n = 0.025, S = 0.0005.
  SectionSpec spec;
  spec.shape = Shape::trapezoidal;
  spec.width = 10.0;
  spec.side_slope_left = 2.0;
  spec.side_slope_right = 2.0;
  spec.height = 5.0;
  const auto c = channel(spec, {0.025}, 0.0005, units::System::us);
  const double expected = manning(kUsK, 0.025, 48.0, 10.0 + 6.0 * std::sqrt(5.0), 0.0005);
  CHECK(c->discharge(3.0) == doctest::Approx(expected).epsilon(1e-10));
  // With White's rounded 1.486 the figure is 0.0055 % higher: the constant matters at 1e-4.
  CHECK(c->discharge(3.0) ==
        doctest::Approx(manning(1.486, 0.025, 48.0, 10.0 + 6.0 * std::sqrt(5.0), 0.0005))
            .epsilon(1e-4));
}

TEST_CASE("circular pipe flowing full: Q_f = 0.311685 (k/n) D^(8/3) S^(1/2)") {
  // Closed form [C]: Q_f = (k/n) (pi D^2/4) (D/4)^(2/3) S^(1/2) = 0.31168547 (k/n) D^(8/3) S^(1/2).
  const double d = 1.0, n = 0.013, slope = 0.001;
  const auto c = channel(circle(d), {n}, slope);
  const double full = c->discharge(d);
  CHECK(full ==
        doctest::Approx(0.311685 / n * std::pow(d, 8.0 / 3.0) * std::sqrt(slope)).epsilon(2e-6));
  // [C] computed with scipy for D = 1 m, n = 0.013, S = 0.001: Q_f = 0.758182 m^3/s,
  // V_f = 0.965347 m/s.
  CHECK(full == doctest::Approx(0.758182).epsilon(1e-6));
  CHECK(c->at_depth(d).velocity == doctest::Approx(0.965347).epsilon(1e-6));
}

TEST_CASE("circular pipe half full carries exactly half the full discharge") {
  // Closed form [C]: at y = D/2 the area is half and R = D/4, the same as full.
  const auto c = channel(circle(0.75), {0.012}, 0.004);
  CHECK(c->discharge(0.375) == doctest::Approx(0.5 * c->discharge(0.75)).epsilon(kExact));
  CHECK(c->at_depth(0.375).velocity == doctest::Approx(c->at_depth(0.75).velocity).epsilon(kExact));
}

TEST_CASE("circular pipe partly full: Q/Q_f and V/V_f") {
  // y/D, Q/Q_f, V/V_f with n constant. Closed form [C] (computed with scipy); the same as the
  // table of circular sections in Chow (1959), appendix A (from memory). Five decimals: checked to
  // half a unit in the last place.
  struct Row {
    double depth, discharge, velocity;
  };
  const Row rows[] = {{0.10, 0.02088, 0.40116},
                      {0.25, 0.13698, 0.70067},
                      {0.50, 0.50000, 1.00000},
                      {0.75, 0.91188, 1.13347},
                      {0.90, 1.06580, 1.12431}};
  const double d = 1.2;
  const auto c = channel(circle(d), {0.013}, 0.002);
  const HydraulicState full = c->at_depth(d);
  for (const Row& row : rows) {
    CAPTURE(row.depth);
    const HydraulicState s = c->at_depth(row.depth * d);
    CHECK(std::abs(s.discharge / full.discharge - row.discharge) <= 5e-6);
    CHECK(std::abs(s.velocity / full.velocity - row.velocity) <= 5e-6);
  }
}

TEST_CASE("circular pipe: largest discharge and velocity below the crown") {
  // F. M. White, "Fluid Mechanics", ch. 10, eqs. 10.20-10.21: the maximum discharge occurs at
  // y = 0.938 D and is 8 percent more than full; the maximum velocity at y = 0.813 D, 14 percent
  // more than full. Exact [C] (the closed form maximised with scipy.optimize): y/D = 0.938181,
  // Q/Q_f = 1.075706; y/D = 0.812803, V/V_f = 1.140029.
  const double d = 1.0;
  const auto c = channel(circle(d), {0.013}, 0.001);
  const HydraulicState full = c->at_depth(d);
  double best_discharge = 0.0, best_discharge_depth = 0.0;
  double best_velocity = 0.0, best_velocity_depth = 0.0;
  for (int i = 1; i <= 100000; ++i) {  // y/D in steps of 1e-5
    const double y = d * i / 100000.0;
    const HydraulicState s = c->at_depth(y);
    if (s.discharge > best_discharge) best_discharge = s.discharge, best_discharge_depth = y;
    if (s.velocity > best_velocity) best_velocity = s.velocity, best_velocity_depth = y;
  }
  CHECK(best_discharge_depth == doctest::Approx(0.938).epsilon(0.5e-3 / 0.938));      // White
  CHECK(best_discharge / full.discharge == doctest::Approx(1.08).epsilon(0.005));     // White
  CHECK(best_velocity_depth == doctest::Approx(0.813).epsilon(0.5e-3 / 0.813));       // White
  CHECK(best_velocity / full.velocity == doctest::Approx(1.14).epsilon(0.005));       // White
  CHECK(std::abs(best_discharge_depth - 0.938181) <= 1e-5);                           // [C]
  CHECK(best_discharge / full.discharge == doctest::Approx(1.075706).epsilon(1e-6));  // [C]
  CHECK(std::abs(best_velocity_depth - 0.812803) <= 1e-5);                            // [C]
  CHECK(best_velocity / full.velocity == doctest::Approx(1.140029).epsilon(1e-6));    // [C]
  // The channel's own figure for the most it carries partly full.
  CHECK(c->max_open_discharge() / full.discharge == doctest::Approx(1.075706).epsilon(1e-6));
}

TEST_CASE("open sections carry without limit") {
  CHECK(std::isinf(channel(rectangle(1.0, 1.0), {0.013}, 0.001)->max_open_discharge()));
}

TEST_CASE("flags: dry, above the section, surcharged, supercritical") {
  const auto open = channel(rectangle(2.0, 1.0), {0.013}, 0.001);
  SUBCASE("depth <= 0 or NaN: below_zero_flow, everything 0") {
    for (const double y : {0.0, -0.3, std::nan("")}) {
      const HydraulicState s = open->at_depth(y);
      CHECK(s.flags == Flags(Flag::below_zero_flow));
      CHECK(s.discharge == 0.0);
      CHECK(s.area == 0.0);
      CHECK(s.velocity == 0.0);
      CHECK(s.froude == 0.0);
      CHECK(open->discharge(y) == 0.0);
    }
  }
  SUBCASE("an open section above its top: above_section, walls continue") {
    const HydraulicState s = open->at_depth(1.5);
    CHECK(s.flags.has(Flag::above_section));
    CHECK_FALSE(s.flags.has(Flag::surcharged));
    // Closed form [C]: the rectangle continues: A = 3, P = 5.
    CHECK(s.discharge == doctest::Approx(manning(1.0, 0.013, 3.0, 5.0, 0.001)).epsilon(kExact));
    CHECK_FALSE(open->at_depth(1.0).flags.has(Flag::above_section));
  }
  SUBCASE("a pipe above its crown: surcharged, computed as flowing full") {
    const auto pipe = channel(circle(0.5), {0.013}, 0.001);
    const HydraulicState s = pipe->at_depth(0.8);
    CHECK(s.flags.has(Flag::surcharged));
    CHECK_FALSE(s.flags.has(Flag::above_section));
    // Closed form [C]: full pipe, A = pi D^2/4, P = pi D.
    const double area = std::numbers::pi * 0.25 / 4.0;
    CHECK(
        s.discharge ==
        doctest::Approx(manning(1.0, 0.013, area, std::numbers::pi * 0.5, 0.001)).epsilon(kExact));
    CHECK(std::isinf(s.hydraulic_depth));  // no free surface
    // No free surface, no Froude number (Fr compares V with the speed of a surface wave,
    // sqrt(g A/T) [C]): missing, not 0, which would read as still water.
    CHECK(std::isnan(s.froude));
    CHECK_FALSE(s.flags.has(Flag::supercritical));
    // Exactly full (at the crown, T = 0) likewise; just below the crown there is a surface.
    CHECK(std::isnan(pipe->at_depth(0.5).froude));
    CHECK(pipe->at_depth(0.5).flags.empty());
    CHECK(pipe->at_depth(0.499).froude > 0.0);
  }
  SUBCASE("supercritical when the Froude number exceeds 1") {
    // A steep smooth rectangle; Fr = V / sqrt(g y) [C].
    const auto steep = channel(rectangle(2.0, 1.0), {0.011}, 0.03);
    const HydraulicState s = steep->at_depth(0.4);
    const double velocity = manning(1.0, 0.011, 0.8, 2.8, 0.03) / 0.8;
    CHECK(s.froude == doctest::Approx(velocity / std::sqrt(9.80665 * 0.4)).epsilon(kExact));
    REQUIRE(s.froude > 1.0);
    CHECK(s.flags.has(Flag::supercritical));
    const HydraulicState mild = open->at_depth(0.4);
    REQUIRE(mild.froude < 1.0);
    CHECK_FALSE(mild.flags.has(Flag::supercritical));
  }
}

TEST_CASE("subsections with different roughness are summed by conveyance") {
  // A main channel 4 wide and 2 deep between floodplains 10 wide (walls at the ends to 3), breaks
  // at the main channel's edges. By hand at depth 2.6: floodplains A = 6, P = 10.6 each; main
  // channel A = 10.4, P = 8 (the dividing verticals are not wetted). Q = sum (1/n_i) A_i R_i^(2/3)
  // S^(1/2) [C].
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = {{0, 3}, {0, 2}, {10, 2}, {10, 0}, {14, 0}, {14, 2}, {24, 2}, {24, 3}};
  spec.breaks = {10.0, 14.0};
  const double slope = 0.0015;
  const auto c = channel(spec, {0.06, 0.03, 0.05}, slope);
  const double expected = manning(1.0, 0.06, 6.0, 10.6, slope) +
                          manning(1.0, 0.03, 10.4, 8.0, slope) +
                          manning(1.0, 0.05, 6.0, 10.6, slope);
  CHECK(c->discharge(2.6) == doctest::Approx(expected).epsilon(kExact));
  const HydraulicState s = c->at_depth(2.6);
  CHECK(s.discharge == doctest::Approx(expected).epsilon(kExact));
  // Whole-section figures are of the totals: A = 22.4, P = 29.2, T = 24.
  CHECK(s.area == doctest::Approx(22.4).epsilon(kExact));
  CHECK(s.wetted_perimeter == doctest::Approx(29.2).epsilon(kExact));
  CHECK(s.hydraulic_radius == doctest::Approx(22.4 / 29.2).epsilon(kExact));
  CHECK(s.velocity == doctest::Approx(expected / 22.4).epsilon(kExact));
  CHECK(s.froude ==
        doctest::Approx(expected / 22.4 / std::sqrt(9.80665 * 22.4 / 24.0)).epsilon(kExact));
}

TEST_CASE("the same channel in US customary and metric units agrees after conversion") {
  // 1 ft = 0.3048 m exactly, so discharge converts by 0.3048^3 (units.hpp); n is the same number
  // in both systems and k = (1/0.3048)^(1/3) makes them agree [C].
  const double ft = 0.3048;
  auto both = [&](SectionSpec metric, SectionSpec us, std::vector<double> n, double slope) {
    const auto m = channel(metric, n, slope, units::System::metric);
    const auto u = channel(us, n, slope, units::System::us);
    for (const double fraction : {0.003, 0.2, 0.5, 0.9, 1.0, 1.3}) {
      const double depth_m = fraction * m->section().top_depth();
      CAPTURE(depth_m);
      const HydraulicState sm = m->at_depth(depth_m);
      const HydraulicState su = u->at_depth(depth_m / ft);
      CHECK(su.discharge * ft * ft * ft == doctest::Approx(sm.discharge).epsilon(1e-9));
      CHECK(su.velocity * ft == doctest::Approx(sm.velocity).epsilon(1e-9));
      if (std::isnan(sm.froude)) {
        CHECK(std::isnan(su.froude));  // a full conduit has none in either system
      } else {
        CHECK(su.froude == doctest::Approx(sm.froude).epsilon(1e-9));
      }
    }
    const double q_m = 0.4 * m->discharge(m->section().top_depth());
    CHECK(*u->normal_depth(q_m / (ft * ft * ft)) * ft ==
          doctest::Approx(*m->normal_depth(q_m)).epsilon(1e-9));
    CHECK(*u->critical_depth(q_m / (ft * ft * ft)) * ft ==
          doctest::Approx(*m->critical_depth(q_m)).epsilon(1e-9));
  };
  SUBCASE("trapezoidal") {
    SectionSpec metric;
    metric.shape = Shape::trapezoidal;
    metric.width = 1.8;
    metric.side_slope_left = 1.5;
    metric.side_slope_right = 3.0;
    metric.height = 1.2;
    SectionSpec us = metric;
    us.width = 1.8 / ft;
    us.height = 1.2 / ft;
    both(metric, us, {0.022}, 0.0007);
  }
  SUBCASE("circular") { both(circle(0.6), circle(0.6 / ft), {0.013}, 0.004); }
  SUBCASE("surveyed with subsections") {
    SectionSpec metric;
    metric.shape = Shape::surveyed;
    metric.points = {{0, 12.0}, {3, 11.0}, {5, 10.0}, {6, 10.4}, {9, 11.2}, {14, 11.5}};
    metric.breaks = {4.0, 8.0};
    SectionSpec us = metric;
    for (auto& [station, elevation] : us.points) station /= ft, elevation /= ft;
    for (double& station : us.breaks) station /= ft;
    both(metric, us, {0.04, 0.03, 0.05}, 0.002);
  }
}
