// Small builders shared by the hydraulics tests: section specs by shape and a channel from a spec.
#pragma once

#include <doctest/doctest.h>

#include <memory>
#include <utility>
#include <vector>

#include "stagewell/channel.hpp"
#include "stagewell/section.hpp"

namespace stagewell::testing {

inline SectionSpec rectangle(double width, double height) {
  SectionSpec spec;
  spec.shape = Shape::rectangular;
  spec.width = width;
  spec.height = height;
  return spec;
}

inline SectionSpec trapezoid(double bottom, double left, double right, double height) {
  SectionSpec spec;
  spec.shape = Shape::trapezoidal;
  spec.width = bottom;
  spec.side_slope_left = left;
  spec.side_slope_right = right;
  spec.height = height;
  return spec;
}

inline SectionSpec triangle(double left, double right, double height) {
  SectionSpec spec;
  spec.shape = Shape::triangular;
  spec.side_slope_left = left;
  spec.side_slope_right = right;
  spec.height = height;
  return spec;
}

inline SectionSpec circle(double diameter) {
  SectionSpec spec;
  spec.shape = Shape::circular;
  spec.diameter = diameter;
  return spec;
}

// The channel of a spec the test expects to be valid (fails the test otherwise).
inline std::shared_ptr<const Channel> channel(const SectionSpec& spec,
                                              std::vector<double> roughness, double slope,
                                              units::System system = units::System::metric) {
  auto section = make_section(spec);
  REQUIRE_MESSAGE(section.has_value(), section.error().message);
  return std::make_shared<Channel>(std::shared_ptr<const Section>(std::move(*section)),
                                   std::move(roughness), slope, system);
}

}  // namespace stagewell::testing
