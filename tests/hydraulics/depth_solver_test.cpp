// Normal and critical depth against closed forms and an independent root finder.
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <utility>
#include <vector>

#include "section_builders.hpp"
#include "stagewell/channel.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

double value(const Result<double>& result) {
  REQUIRE_MESSAGE(result.has_value(), result.error().message);
  return *result;
}

constexpr double g_metric = 9.80665;       // m/s^2, standard gravity
constexpr double g_us = 9.80665 / 0.3048;  // ft/s^2

}  // namespace

TEST_CASE("rectangular critical depth: y_c = (q^2/g)^(1/3)") {
  // Closed form [C] (White, "Fluid Mechanics", ch. 10; Chow 1959, ch. 3 — from memory).
  const auto metric = channel(rectangle(3.0, 4.0), {0.015}, 0.001);
  const double q = 12.0 / 3.0;  // m^2/s
  CHECK(value(metric->critical_depth(12.0)) ==
        doctest::Approx(std::cbrt(q * q / g_metric)).epsilon(1e-12));
  const auto us = channel(rectangle(10.0, 8.0), {0.015}, 0.001, units::System::us);
  const double q_us = 200.0 / 10.0;  // ft^2/s
  CHECK(value(us->critical_depth(200.0)) ==
        doctest::Approx(std::cbrt(q_us * q_us / g_us)).epsilon(1e-12));
}

TEST_CASE("triangular critical depth: y_c = (2 Q^2 / (g m^2))^(1/5)") {
  // Closed form [C]: A = m y^2, T = 2 m y in Q^2 T = g A^3; m the mean side slope.
  const double q = 0.35;
  CHECK(value(channel(triangle(1.5, 1.5, 2.0), {0.015}, 0.001)->critical_depth(q)) ==
        doctest::Approx(std::pow(2.0 * q * q / (g_metric * 1.5 * 1.5), 0.2)).epsilon(1e-12));
  CHECK(value(channel(triangle(0.0, 4.0, 2.0), {0.015}, 0.001)->critical_depth(q)) ==
        doctest::Approx(std::pow(2.0 * q * q / (g_metric * 2.0 * 2.0), 0.2)).epsilon(1e-12));
}

TEST_CASE("triangular normal depth, closed form") {
  // Closed form [C]: A = m y^2, R = m y / (2 sqrt(1 + m^2)), so
  // y_n = (Q n / (k S^(1/2) m (m / (2 sqrt(1 + m^2)))^(2/3)))^(3/8).
  const double m = 2.0, n = 0.016, slope = 0.002, q = 1.3;
  const double expected = std::pow(
      q * n / (std::sqrt(slope) * m * std::pow(m / (2.0 * std::sqrt(1.0 + m * m)), 2.0 / 3.0)),
      3.0 / 8.0);
  CHECK(value(channel(triangle(m, m, 2.0), {n}, slope)->normal_depth(q)) ==
        doctest::Approx(expected).epsilon(1e-12));
}

TEST_CASE("trapezoidal normal and critical depth against scipy") {
  // b = 3 m, side slopes 2 and 1.5, n = 0.015, S = 0.0005, Q = 12 m^3/s. [C] computed with
  // scipy.optimize.brentq (xtol 1e-15) on the closed-form trapezoid, g = 9.80665:
  // y_n = 1.500221026722 m, y_c = 0.967969503758 m.
  const auto c = channel(trapezoid(3.0, 2.0, 1.5, 2.0), {0.015}, 0.0005);
  CHECK(value(c->normal_depth(12.0)) == doctest::Approx(1.500221026722).epsilon(1e-11));
  CHECK(value(c->critical_depth(12.0)) == doctest::Approx(0.967969503758).epsilon(1e-11));
}

TEST_CASE("circular normal depth") {
  const double d = 0.9;
  const auto c = channel(circle(d), {0.013}, 0.002);
  const double full = c->discharge(d);
  SUBCASE("half the full discharge flows half full") {
    // Closed form [C]: Q(D/2) = Q_f/2 exactly.
    CHECK(value(c->normal_depth(0.5 * full)) == doctest::Approx(0.5 * d).epsilon(1e-12));
  }
  SUBCASE("against scipy") {
    // [C] scipy.optimize.brentq on the closed form, D = 0.9 m, n = 0.013, S = 0.002,
    // Q = 0.6 m^3/s: y_n = 0.576746698137 m (Q_f = 0.809595759 m^3/s).
    CHECK(full == doctest::Approx(0.809595759).epsilon(1e-9));
    CHECK(value(c->normal_depth(0.6)) == doctest::Approx(0.576746698137).epsilon(1e-11));
  }
  SUBCASE("from the table of Q/Q_f") {
    // Closed form [C]; Chow (1959), appendix A (from memory): Q/Q_f = 0.91188 at y/D = 0.75.
    // The 5-decimal figure fixes y/D to about 1e-5.
    CHECK(std::abs(value(c->normal_depth(0.91188 * full)) / d - 0.75) <= 2e-5);
  }
  SUBCASE("between Q_f and the peak two depths carry it: the lower one is returned") {
    // Q/Q_f = 1.06580 at y/D = 0.90 (same table); the other depth lies above the peak at
    // y/D = 0.938 (White, "Fluid Mechanics", eq. 10.20).
    const double y = value(c->normal_depth(1.06580 * full));
    CHECK(std::abs(y / d - 0.90) <= 3e-5);
    CHECK(c->discharge(0.99 * d) < 1.06580 * full);  // so a root lies in (0.938 D, 0.99 D) too
  }
  SUBCASE("more than the peak is impossible") {
    // Peak Q/Q_f = 1.075706 [C] (White: "8 percent more" than full).
    CHECK(c->normal_depth(1.0757 * full).has_value());
    const auto too_much = c->normal_depth(1.0758 * full);
    REQUIRE_FALSE(too_much.has_value());
    CHECK(too_much.error().kind == ErrorKind::impossible);
    CHECK(too_much.error().message.back() == '.');
  }
}

TEST_CASE("circular critical depth") {
  const double d = 0.9;
  const auto c = channel(circle(d), {0.013}, 0.002);
  // Closed form [C]: at y = D/2, A = pi D^2/8 and T = D, so Q = sqrt(g A^3 / T).
  const double area = std::numbers::pi * d * d / 8.0;
  CHECK(value(c->critical_depth(std::sqrt(g_metric * area * area * area / d))) ==
        doctest::Approx(0.5 * d).epsilon(1e-12));
  // [C] scipy.optimize.brentq on g A^3/T = Q^2, D = 0.9 m, Q = 0.5 m^3/s: 0.411873074022 m.
  CHECK(value(c->critical_depth(0.5)) == doctest::Approx(0.411873074022).epsilon(1e-11));
  // The surface closes at the crown, so even a large discharge has a critical depth below it.
  const double y = value(c->critical_depth(50.0));
  CHECK(y < d);
  CHECK(y > 0.99 * d);
}

TEST_CASE("normal depth round-trips through Manning's equation for every shape") {
  // Manning's equation written out [C] at the depth returned must give the discharge asked for.
  const auto rect = channel(rectangle(2.0, 1.5), {0.014}, 0.001);
  for (const double q : {1e-6, 0.01, 0.7, 3.0, 40.0}) {
    CAPTURE(q);
    const double y = value(rect->normal_depth(q));
    const double area = 2.0 * y, perimeter = 2.0 + 2.0 * y;
    CHECK(std::pow(area / perimeter, 2.0 / 3.0) * area * std::sqrt(0.001) / 0.014 ==
          doctest::Approx(q).epsilon(1e-12));
  }
  SectionSpec surveyed;
  surveyed.shape = Shape::surveyed;
  surveyed.points = {{0, 5}, {2, 3}, {3, 3.2}, {4, 1}, {6, 0.5}, {7, 2}, {9, 2.5}, {10, 4.5}};
  surveyed.breaks = {3.5, 7.5};
  const std::shared_ptr<const Channel> shapes[] = {
      rect, channel(trapezoid(1.0, 1.0, 3.0, 1.0), {0.02}, 0.003),
      channel(triangle(1.0, 2.0, 1.0), {0.02}, 0.003), channel(circle(1.5), {0.013}, 0.001),
      channel(surveyed, {0.04, 0.03, 0.05}, 0.002)};
  for (const auto& c : shapes) {
    CAPTURE(name(c->section().shape()));
    for (const double fraction : {1e-4, 0.05, 0.3, 0.77, 0.93, 1.0, 1.8}) {
      if (c->section().closed() && fraction > 0.93) continue;  // two depths there
      const double y = fraction * c->section().top_depth();
      CAPTURE(y);
      CHECK(value(c->normal_depth(c->discharge(y))) == doctest::Approx(y).epsilon(1e-11));
    }
  }
}

TEST_CASE("critical depth satisfies Q^2 T = g A^3") {
  // The definition of critical flow [C] (Chow 1959, ch. 3 — from memory), checked with the
  // section's geometry at the depth returned.
  SectionSpec surveyed;
  surveyed.shape = Shape::surveyed;
  surveyed.points = {{0, 5}, {2, 3}, {3, 3.2}, {4, 1}, {6, 0.5}, {7, 2}, {9, 2.5}, {10, 4.5}};
  const auto c = channel(surveyed, {0.035}, 0.002);
  for (const double q : {0.05, 2.0, 15.0, 400.0}) {
    CAPTURE(q);
    const double y = value(c->critical_depth(q));
    const Geometry g = c->section().geometry(y);
    CHECK(q * q * g.top_width / (g_metric * g.area * g.area * g.area) ==
          doctest::Approx(1.0).epsilon(1e-11));
  }
}

TEST_CASE("above an open section's top the vertical walls carry more") {
  // Closed form [C]: a rectangle 2 wide continues as a rectangle.
  const auto c = channel(rectangle(2.0, 1.0), {0.014}, 0.001);
  const double y = 2.75;
  const double area = 2.0 * y, perimeter = 2.0 + 2.0 * y;
  const double q = std::pow(area / perimeter, 2.0 / 3.0) * area * std::sqrt(0.001) / 0.014;
  CHECK(value(c->normal_depth(q)) == doctest::Approx(y).epsilon(1e-12));
  CHECK(value(c->critical_depth(40.0)) ==
        doctest::Approx(std::cbrt(400.0 / g_metric)).epsilon(1e-12));
}

TEST_CASE("where a level bench floods the discharge dips: the lowest depth is returned") {
  // Benches 4 long at elevation 2 (hand computation, see the surveyed section tests): just below
  // 2 the channel carries more than just above it, where the benches join the wetted perimeter.
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = {{0, 3}, {0, 2}, {4, 2}, {5, 0}, {7, 0}, {8, 2}, {12, 2}, {12, 3}};
  const auto c = channel(spec, {0.03}, 0.001);
  // Manning's equation written out [C] at 2 (A = 6, P = 2 + 2 sqrt 5) and at 2.01 (A = 6.12,
  // P = 2 + 2 sqrt 5 + 8 + 0.02).
  const double k = std::sqrt(0.001) / 0.03;
  const double below = k * 6.0 * std::pow(6.0 / (2.0 + 2.0 * std::sqrt(5.0)), 2.0 / 3.0);
  const double above = k * 6.12 * std::pow(6.12 / (10.02 + 2.0 * std::sqrt(5.0)), 2.0 / 3.0);
  REQUIRE(above < below);
  const double target = 0.5 * (above + below);
  const double y = value(c->normal_depth(target));
  CHECK(y < 2.0);
  // Below the benches the channel is a trapezoid: bottom 2, sides 0.5 H : 1 V [C].
  const double area = y * (2.0 + 0.5 * y), perimeter = 2.0 + 2.0 * y * std::sqrt(1.25);
  CHECK(k * area * std::pow(area / perimeter, 2.0 / 3.0) == doctest::Approx(target).epsilon(1e-12));
}

TEST_CASE("errors and edge cases of the depth solvers") {
  const auto c = channel(rectangle(2.0, 1.0), {0.014}, 0.001);
  CHECK(value(c->normal_depth(0.0)) == 0.0);
  CHECK(value(c->critical_depth(0.0)) == 0.0);
  for (const double bad : {-1.0, -1e-300, std::nan(""), double{INFINITY}}) {
    CAPTURE(bad);
    const auto normal = c->normal_depth(bad);
    REQUIRE_FALSE(normal.has_value());
    CHECK(normal.error().kind == ErrorKind::invalid_argument);
    const auto critical = c->critical_depth(bad);
    REQUIRE_FALSE(critical.has_value());
    CHECK(critical.error().kind == ErrorKind::invalid_argument);
  }
}
