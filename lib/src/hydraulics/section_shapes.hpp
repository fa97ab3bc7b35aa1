// The concrete sections behind make_section(). Private to the hydraulics module: callers see only
// the Section interface. Each factory takes a spec that make_section() has already validated,
// except make_surveyed(), which validates its own points and breaks.
#pragma once

#include <memory>

#include "stagewell/result.hpp"
#include "stagewell/section.hpp"

namespace stagewell::detail {

// Rectangular, trapezoidal and triangular sections: a flat bottom `bottom_width` wide (0 for a
// triangle) and straight sides `slope_left` / `slope_right` horizontal per 1 vertical.
// REQUIRES: bottom_width >= 0, slopes >= 0, bottom_width + slopes > 0, height > 0, all finite.
std::unique_ptr<const Section> make_prismatic(Shape shape, double bottom_width, double slope_left,
                                              double slope_right, double height);

// REQUIRES: diameter > 0 and finite.
std::unique_ptr<const Section> make_circular(double diameter);

Result<std::unique_ptr<const Section>> make_surveyed(const SectionSpec& spec);

}  // namespace stagewell::detail
