// SiteConfig::depth_for_stage and stage_for_depth: depth = (stage + offset - zero_flow) in the
// configuration's length unit. Factors from the definitions 1 cm = 0.01 m, 1 mm = 0.001 m,
// 1 in = 2.54 cm, 1 ft = 0.3048 m (international inch and foot, exact).
#include <doctest/doctest.h>

#include "stagewell/config.hpp"

using namespace stagewell;

TEST_CASE("stage in centimetres to depth in metres, with offset and zero flow") {
  SiteConfig site;
  site.stage.units = units::Length::cm;
  site.stage.offset = 2.0;
  site.stage.zero_flow = 5.0;
  // 45 + 2 - 5 = 42 cm = 0.42 m
  CHECK(site.depth_for_stage(45.0, units::System::metric) == doctest::Approx(0.42).epsilon(1e-15));
  CHECK(site.stage_for_depth(0.42, units::System::metric) == doctest::Approx(45.0).epsilon(1e-15));
}

TEST_CASE("stage in inches to depth in feet") {
  SiteConfig site;
  site.stage.units = units::Length::in;
  site.stage.zero_flow = 1.0;
  // 19 - 1 = 18 in = 1.5 ft
  CHECK(site.depth_for_stage(19.0, units::System::us) == doctest::Approx(1.5).epsilon(1e-15));
  CHECK(site.stage_for_depth(1.5, units::System::us) == doctest::Approx(19.0).epsilon(1e-15));
}

TEST_CASE("stage in millimetres to depth in feet") {
  SiteConfig site;
  site.stage.units = units::Length::mm;
  // 304.8 mm = 1 ft
  CHECK(site.depth_for_stage(304.8, units::System::us) == doctest::Approx(1.0).epsilon(1e-15));
}
