// Cross-section geometry. Depths and lengths are in the configuration's length unit (m or ft);
// a section does not know which: the unit system enters only through Manning's k and gravity.
//
// Depth is measured from the lowest point of the section (the invert of a circular one, the lowest
// surveyed point of a surveyed one). Above the section's top the walls are taken to continue
// vertically at the top width (open sections) or the conduit to be full (circular); callers flag
// such depths with Flag::above_section / Flag::surcharged.
//
// Sections are immutable after construction and safe to share between threads.
#pragma once

#include <cstddef>
#include <memory>
#include <span>
#include <string_view>
#include <utility>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell {

enum class Shape { rectangular, trapezoidal, triangular, circular, surveyed };
std::string_view name(Shape shape);

// Flow area, wetted perimeter and top width at one depth (of the whole section or of one
// subsection).
struct Geometry {
  double area = 0.0;              // L^2
  double wetted_perimeter = 0.0;  // L
  double top_width = 0.0;         // L
};

// The plain description of a section, as configured. Only the fields of its shape are read.
struct SectionSpec {
  Shape shape = Shape::rectangular;
  double width = 0.0;              // rectangular width; trapezoidal bottom width
  double side_slope_left = 0.0;    // trapezoidal, triangular: horizontal per 1 vertical
  double side_slope_right = 0.0;
  double diameter = 0.0;           // circular
  double height = 0.0;             // rectangular, trapezoidal, triangular: depth of the top (> 0)
  std::vector<std::pair<double, double>> points;  // surveyed: (station, elevation), in order
  std::vector<double> breaks;      // surveyed: stations that split it into subsections
};

class Section {
 public:
  virtual ~Section() = default;

  virtual Shape shape() const = 0;

  // 1, or for a surveyed section with breaks, the number of subsections (breaks + 1).
  virtual std::size_t subsection_count() const { return 1; }

  // Geometry of each subsection at `depth`. REQUIRES: out.size() == subsection_count().
  // Dividing verticals between subsections add no wetted perimeter. depth <= 0 gives zeros.
  virtual void subsections(double depth, std::span<Geometry> out) const = 0;

  // Geometry of the whole section at `depth` (sum over subsections).
  Geometry geometry(double depth) const;

  // Depth of the section's top: the configured height, the crown of a circular section, the lower
  // bank of a surveyed one. Always finite and > 0.
  virtual double top_depth() const = 0;

  // True for closed conduits, whose depth cannot exceed top_depth() in open-channel flow.
  virtual bool closed() const { return false; }

  // Depths at which the geometry has a kink (e.g. surveyed vertices), sorted, within
  // (0, top_depth()]. Rating tables put a knot at each.
  virtual std::vector<double> breakpoints() const { return {}; }
};

// Builds a section from its description, or says in one sentence what is wrong with it
// (ErrorKind::invalid_argument), e.g. a width <= 0 or a surveyed section that does not rise to a
// bank on both sides.
Result<std::unique_ptr<const Section>> make_section(const SectionSpec& spec);

}  // namespace stagewell
