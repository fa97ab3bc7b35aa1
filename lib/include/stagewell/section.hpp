// Cross-section geometry. Depths and lengths are in the configuration's length unit (m or ft);
// a section does not know which: the unit system enters only through Manning's k and gravity.
//
// Depth is measured from the lowest point of the section (the invert of a circular one, the lowest
// surveyed point of a surveyed one). Above the section's top the walls are taken to continue
// vertically at the top width (open sections) or the conduit to be full (circular); callers flag
// such depths with Flag::above_section / Flag::surcharged.
//
// Ground exactly at the water level is dry: it adds no wetted perimeter and no top width (so a
// level bench adds its length just above its own elevation, not at it). Every function of depth
// is therefore continuous from below.
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

// Most subsections a surveyed section may have (so that callers can use a buffer on the stack).
inline constexpr std::size_t max_subsections = 16;

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
  double width = 0.0;            // rectangular width; trapezoidal bottom width
  double side_slope_left = 0.0;  // trapezoidal, triangular: horizontal per 1 vertical
  double side_slope_right = 0.0;
  double diameter = 0.0;  // circular
  double height = 0.0;    // rectangular, trapezoidal, triangular: depth of the top (> 0)
  // surveyed: (station, elevation) in order of station, left bank to right bank. Two points may
  // share a station (a vertical wall); stations never decrease (no overhangs).
  std::vector<std::pair<double, double>> points;
  // surveyed: stations strictly inside the section, increasing, that split it into subsections;
  // at most max_subsections - 1.
  std::vector<double> breaks;
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

  // Depths at which the geometry has a kink or a jump (e.g. surveyed vertices), sorted, unique,
  // within (0, top_depth()], always ending with top_depth(). Rating tables put a knot at each.
  virtual std::vector<double> breakpoints() const { return {top_depth()}; }
};

// Builds a section from its description, or says in one sentence what is wrong with it
// (ErrorKind::invalid_argument). Every number must be finite, and:
//   rectangular  width > 0, height > 0
//   trapezoidal  width > 0, side slopes >= 0, height > 0
//   triangular   side slopes >= 0 and not both 0, height > 0
//   circular     diameter > 0
//   surveyed     at least 3 points; stations never decrease and span a width > 0; the first and
//                last points both above the lowest one (it rises to a bank on both sides);
//                breaks as described in SectionSpec.
Result<std::unique_ptr<const Section>> make_section(const SectionSpec& spec);

}  // namespace stagewell
