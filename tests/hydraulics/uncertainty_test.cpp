// The band and the Jones estimate (uncertainty.hpp) against closed forms.
//
// [G] JCGM 100:2008 (the GUM), 5.1.2: u_c^2 = sum (c_i u_i)^2 for uncorrelated inputs; 6.2: the
//     expanded uncertainty k u_c with k = 2.
// [J] The Jones formula as given in the standard open-channel texts:
//     Q_J = Q sqrt(1 + (dh/dt) / (S c)), c = (1/T) dQ/dh.
// [C] Manning's equation for a rectangle differentiated by hand (calculus; common practice):
//     Q = (1/n) b h (b h / (b + 2h))^(2/3) S^(1/2), so
//     d ln Q / dh = 1/h + (2/3) (1/h - 2/(b + 2h)).
#include "stagewell/uncertainty.hpp"

#include <doctest/doctest.h>

#include <cmath>

#include "section_builders.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

double log_slope_rectangle(double b, double h) {  // [C]
  return 1.0 / h + (2.0 / 3.0) * (1.0 / h - 2.0 / (b + 2.0 * h));
}

}  // namespace

TEST_CASE("the rating curve's slope at a depth, rectangle: the closed form [C]") {
  const auto c = channel(rectangle(4.0, 3.0), {0.02}, 0.001);
  for (const double h : {0.05, 0.4, 1.0, 2.5}) {
    CAPTURE(h);
    const StageResponse at = stage_response(*c, h);
    CHECK(at.discharge == doctest::Approx(c->discharge(h)).epsilon(1e-15));
    CHECK(at.top_width == doctest::Approx(4.0).epsilon(1e-15));
    CHECK(at.dq_dh / at.discharge == doctest::Approx(log_slope_rectangle(4.0, h)).epsilon(1e-8));
  }
}

TEST_CASE("the band: 2 sqrt(u_n^2 + (u_S/2)^2 + (u_h dQ/dh / Q)^2) [G]") {
  const auto c = channel(rectangle(4.0, 3.0), {0.02}, 0.001);
  const UncertaintySpec spec{.roughness = 0.08, .slope = 0.12, .stage = 0.01};  // stage in cm
  const double h = 0.6;                                                         // m
  const double u_h = 0.01 * 0.01;  // 0.01 cm in m: the stage unit's conversion applies
  const double stage_term = u_h * log_slope_rectangle(4.0, h);
  const double want = 2.0 * std::sqrt(0.08 * 0.08 + 0.06 * 0.06 + stage_term * stage_term);
  const auto band = relative_band(stage_response(*c, h), spec, 0.01);
  REQUIRE(band);
  CHECK(*band == doctest::Approx(want).epsilon(1e-9));

  SUBCASE("with the default uncertainties and no stage term: 2 sqrt(0.1^2 + 0.05^2) = 22.36 %") {
    const auto roughness_and_slope =
        relative_band(stage_response(*c, h), UncertaintySpec{.stage = 0.0}, 1.0);
    REQUIRE(roughness_and_slope);
    CHECK(*roughness_and_slope == doctest::Approx(2.0 * std::sqrt(0.0125)).epsilon(1e-12));
  }
}

TEST_CASE("no band without a positive discharge") {
  CHECK_FALSE(relative_band(StageResponse{0.0, 1.0, 1.0}, UncertaintySpec{}, 1.0));
  CHECK_FALSE(relative_band(StageResponse{-1.0, 1.0, 1.0}, UncertaintySpec{}, 1.0));
}

TEST_CASE("the band's ends: the low end never below 0; without a band, the discharge") {
  CHECK(*band_low(2.0, 0.25) == doctest::Approx(1.5));
  CHECK(*band_high(2.0, 0.25) == doctest::Approx(2.5));
  CHECK(*band_low(2.0, 1.4) == 0.0);
  CHECK(*band_low(2.0, std::nullopt) == 2.0);
  CHECK(*band_high(2.0, std::nullopt) == 2.0);
  CHECK_FALSE(band_low(std::nullopt, 0.2));
}

TEST_CASE("the Jones estimate [J]: rising above, falling below, none where it cannot be formed") {
  const auto c = channel(rectangle(4.0, 3.0), {0.02}, 0.001);
  const double h = 0.8;
  const StageResponse at = stage_response(*c, h);
  const double celerity = at.dq_dh / 4.0;  // m/s
  for (const double rate : {1e-4, -1e-4, 0.0}) {
    CAPTURE(rate);
    const auto q = jones_discharge(at, 0.001, rate);
    REQUIRE(q);
    CHECK(
        *q ==
        doctest::Approx(at.discharge * std::sqrt(1.0 + rate / (0.001 * celerity))).epsilon(1e-12));
    if (rate > 0) CHECK(*q > at.discharge);
    if (rate < 0) CHECK(*q < at.discharge);
  }
  // Falling faster than S c: the root of a negative number.
  CHECK_FALSE(jones_discharge(at, 0.001, -1.01 * 0.001 * celerity));
  // A conduit flowing full has no free surface (T = 0) and no rise of discharge with stage.
  const auto pipe = channel(circle(0.6), {0.013}, 0.002);
  CHECK_FALSE(jones_discharge(stage_response(*pipe, 0.7), 0.002, 1e-4));
  // No flow.
  CHECK_FALSE(jones_discharge(StageResponse{}, 0.001, 1e-4));
}
