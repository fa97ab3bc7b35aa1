// The roughness fit (calibration.hpp) on small sets whose answers follow by hand, and the main
// channel of a compound section. The fit's agreement with scipy on a larger random set is checked
// end to end (tests/e2e/gaugings_command_test.py).
#include "stagewell/calibration.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "stagewell/gaugings.hpp"

namespace stagewell {
namespace {

TEST_CASE("the factor is the geometric mean of computed over measured, with Student's t interval") {
  // ln(Qc/Qm) = 0.1, 0.2, 0.3: mean 0.2, sample standard deviation 0.1 (by hand).
  const std::vector<CalibrationPoint> points = {
      {.time_ms = 1, .measured = 1.0, .computed = std::exp(0.1)},
      {.time_ms = 2, .measured = 2.0, .computed = 2.0 * std::exp(0.2)},
      {.time_ms = 3, .measured = 4.0, .computed = 4.0 * std::exp(0.3)},
  };
  const auto fit = fit_roughness(points);
  REQUIRE(fit.has_value());
  CHECK(fit->count == 3);
  CHECK(fit->factor == doctest::Approx(std::exp(0.2)).epsilon(1e-12));
  // t(0.975, 2 degrees of freedom) = 4.303 (the two-sided 95 % column of any Student's t table).
  const double half_width = std::log(fit->factor_high / fit->factor);
  CHECK(half_width == doctest::Approx(4.303 * 0.1 / std::sqrt(3.0)).epsilon(1e-4));
  CHECK(std::log(fit->factor / fit->factor_low) == doctest::Approx(half_width).epsilon(1e-12));
  // Before: differences 100 (e^-x - 1) for x = 0.1, 0.2, 0.3; after, for x - 0.2.
  const auto rms = [](std::vector<double> xs) {
    double sum = 0.0;
    for (double x : xs) sum += std::pow(100.0 * (std::exp(-x) - 1.0), 2);
    return std::sqrt(sum / 3.0);
  };
  CHECK(fit->rms_difference_percent_before == doctest::Approx(rms({0.1, 0.2, 0.3})));
  CHECK(fit->rms_difference_percent_after == doctest::Approx(rms({-0.1, 0.0, 0.1})));
  CHECK(fit->rms_difference_percent_after < fit->rms_difference_percent_before);
}

TEST_CASE("agreeing gaugings give the factor 1 and an interval of width 0") {
  const std::vector<CalibrationPoint> points = {
      {1, 1.0, 1.0}, {2, 3.0, 3.0}, {3, 0.5, 0.5}, {4, 10.0, 10.0}};
  const auto fit = fit_roughness(points);
  REQUIRE(fit.has_value());
  CHECK(fit->factor == 1.0);
  CHECK(fit->factor_low == 1.0);
  CHECK(fit->factor_high == 1.0);
  CHECK(fit->rms_difference_percent_after == 0.0);
}

TEST_CASE("fewer than three gaugings, or one without a positive discharge, are refused") {
  const std::vector<CalibrationPoint> two = {{1, 1.0, 1.1}, {2, 2.0, 2.1}};
  const auto refused = fit_roughness(two);
  REQUIRE_FALSE(refused.has_value());
  CHECK(refused.error().message.find("2 usable gaugings: a roughness fit needs at least 3") !=
        std::string::npos);
  const std::vector<CalibrationPoint> zero = {{1, 1.0, 1.1}, {2, 2.0, 2.1}, {3, 0.0, 1.0}};
  CHECK_FALSE(fit_roughness(zero).has_value());
}

TEST_CASE("the change entry sets every subsection's n from the first gauging's time") {
  const std::vector<double> one = {0.0312345};
  CHECK(roughness_change_yaml(0, one) ==
        "      - from: 1970-01-01T00:00:00Z\n        roughness: 0.03123\n");
  const std::vector<double> three = {0.05, 0.03, 0.045};
  CHECK(roughness_change_yaml(86'400'000, three) ==
        "      - from: 1970-01-02T00:00:00Z\n        roughness: [0.05, 0.03, 0.045]\n");
}

TEST_CASE("the main channel is the subsection holding the lowest point") {
  SectionSpec section;
  section.shape = Shape::surveyed;
  // Left floodplain (0-10), channel (10-14) down to 0, right floodplain (14-24).
  section.points = {{0, 3}, {0, 2}, {10, 2}, {10, 0}, {14, 0}, {14, 2}, {24, 2}, {24, 3}};
  section.breaks = {10, 14};
  CHECK(main_subsection(section) == 1);
  section.breaks = {5};
  CHECK(main_subsection(section) == 1);
  section.breaks = {13, 20};  // the lowest stretch of bed, 10 to 14, has its middle (12) left of 13
  CHECK(main_subsection(section) == 0);
  section.breaks = {11, 20};
  CHECK(main_subsection(section) == 1);
  section.breaks.clear();
  CHECK(main_subsection(section) == 0);
  SiteConfig site;
  site.section = section;
  site.section.breaks = {10, 14};
  site.roughness = {0.06, 0.03, 0.05};
  CHECK(main_roughness(site) == 0.03);
}

}  // namespace
}  // namespace stagewell
