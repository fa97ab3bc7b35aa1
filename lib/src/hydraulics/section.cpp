// make_section(): checks a configured description and hands it to the shape that implements it.
#include "stagewell/section.hpp"

#include <fmt/format.h>

#include <array>
#include <cmath>

#include "hydraulics/section_shapes.hpp"

namespace stagewell {
namespace {

// One sentence naming the field, its value and what is allowed.
std::unexpected<Error> bad_field(Shape shape, std::string_view field, double value,
                                 std::string_view allowed) {
  return fail(ErrorKind::invalid_argument, fmt::format("The {} section's {} is {}; it must be {}.",
                                                       name(shape), field, value, allowed));
}

bool positive(double value) { return std::isfinite(value) && value > 0.0; }
bool non_negative(double value) { return std::isfinite(value) && value >= 0.0; }

}  // namespace

std::string_view name(Shape shape) {
  switch (shape) {
    case Shape::rectangular:
      return "rectangular";
    case Shape::trapezoidal:
      return "trapezoidal";
    case Shape::triangular:
      return "triangular";
    case Shape::circular:
      return "circular";
    case Shape::surveyed:
      return "surveyed";
  }
  return "unknown";
}

Geometry Section::geometry(double depth) const {
  std::array<Geometry, max_subsections> parts;
  const auto used = std::span<Geometry>(parts).first(subsection_count());
  subsections(depth, used);
  Geometry total;
  for (const Geometry& part : used) {
    total.area += part.area;
    total.wetted_perimeter += part.wetted_perimeter;
    total.top_width += part.top_width;
  }
  return total;
}

Result<std::unique_ptr<const Section>> make_section(const SectionSpec& spec) {
  const Shape shape = spec.shape;
  switch (shape) {
    case Shape::rectangular:
      if (!positive(spec.width)) return bad_field(shape, "width", spec.width, "greater than 0");
      if (!positive(spec.height)) return bad_field(shape, "height", spec.height, "greater than 0");
      return detail::make_prismatic(shape, spec.width, 0.0, 0.0, spec.height);

    case Shape::trapezoidal:
    case Shape::triangular: {
      if (shape == Shape::trapezoidal && !positive(spec.width)) {
        return bad_field(shape, "bottom width", spec.width, "greater than 0");
      }
      if (!non_negative(spec.side_slope_left)) {
        return bad_field(shape, "left side slope", spec.side_slope_left, "0 or more");
      }
      if (!non_negative(spec.side_slope_right)) {
        return bad_field(shape, "right side slope", spec.side_slope_right, "0 or more");
      }
      if (shape == Shape::triangular && spec.side_slope_left + spec.side_slope_right <= 0.0) {
        return fail(ErrorKind::invalid_argument,
                    "The triangular section has both side slopes 0, so it holds no water; at "
                    "least one must be greater than 0.");
      }
      if (!positive(spec.height)) return bad_field(shape, "height", spec.height, "greater than 0");
      const double bottom = shape == Shape::trapezoidal ? spec.width : 0.0;
      return detail::make_prismatic(shape, bottom, spec.side_slope_left, spec.side_slope_right,
                                    spec.height);
    }

    case Shape::circular:
      if (!positive(spec.diameter)) {
        return bad_field(shape, "diameter", spec.diameter, "greater than 0");
      }
      return detail::make_circular(spec.diameter);

    case Shape::surveyed:
      return detail::make_surveyed(spec);
  }
  return fail(ErrorKind::invalid_argument, "The section's shape is not one stagewell knows.");
}

}  // namespace stagewell
