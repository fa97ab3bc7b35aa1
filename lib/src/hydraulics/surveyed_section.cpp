// A section drawn from surveyed (station, elevation) points joined by straight lines.
//
// The water surface is level across the whole section, so every stretch of ground below it is
// wet, including pools cut off from the deepest one by ground that rises above the water. Each
// straight segment is clipped exactly at the water level: a sloping segment that is partly under
// water contributes the triangle of water above its wet part. Elevations are stored as heights
// above the lowest point, so that a depth equal to a surveyed height compares exactly.
//
// Breaks split the section into subsections at given stations. A point is inserted on the ground
// line at each break so that every segment lies in one subsection. The dividing verticals are
// water against water and add no wetted perimeter.
//
// Above the lower bank the section continues with vertical walls rising from both end points.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <optional>
#include <utility>
#include <vector>

#include "hydraulics/section_shapes.hpp"

namespace stagewell::detail {
namespace {

using Point = std::pair<double, double>;  // (station, height above the lowest point), L

// One straight piece of ground, prepared for the per-depth loop.
struct Segment {
  double low = 0.0;           // height of its lower end, L
  double high = 0.0;          // height of its higher end, L
  double middle = 0.0;        // (low + high) / 2, L
  double width = 0.0;         // horizontal extent, L (0 for a vertical wall)
  double length = 0.0;        // length along the ground, L
  double inverse_rise = 0.0;  // 1 / (high - low), 0 when level
  std::uint32_t subsection = 0;
};

class SurveyedSection final : public Section {
 public:
  SurveyedSection(std::vector<Segment> segments, std::size_t subsection_count, double left_bank,
                  double right_bank, std::vector<double> breakpoints)
      : segments_(std::move(segments)),
        subsection_count_(subsection_count),
        left_bank_(left_bank),
        right_bank_(right_bank),
        breakpoints_(std::move(breakpoints)) {}

  Shape shape() const override { return Shape::surveyed; }
  std::size_t subsection_count() const override { return subsection_count_; }
  double top_depth() const override { return std::min(left_bank_, right_bank_); }
  std::vector<double> breakpoints() const override { return breakpoints_; }

  void subsections(double depth, std::span<Geometry> out) const override {
    for (Geometry& g : out) g = Geometry{};
    if (!(depth > 0.0)) return;
    for (const Segment& s : segments_) {
      if (depth <= s.low) continue;  // dry, including ground exactly at the water level
      Geometry& g = out[s.subsection];
      if (depth >= s.high) {
        g.area += s.width * (depth - s.middle);
        g.wetted_perimeter += s.length;
        g.top_width += s.width;
      } else {
        // Partly under water: the wet fraction of the segment, measured along its rise.
        const double wet = (depth - s.low) * s.inverse_rise;
        const double wet_width = s.width * wet;
        g.area += 0.5 * wet_width * (depth - s.low);
        g.wetted_perimeter += s.length * wet;
        g.top_width += wet_width;
      }
    }
    // Above a bank, the vertical wall rising from that end point.
    if (depth > left_bank_) out.front().wetted_perimeter += depth - left_bank_;
    if (depth > right_bank_) out.back().wetted_perimeter += depth - right_bank_;
  }

 private:
  std::vector<Segment> segments_;
  std::size_t subsection_count_;
  double left_bank_;   // height of the first point, L
  double right_bank_;  // height of the last point, L
  std::vector<double> breakpoints_;
};

std::unexpected<Error> invalid(std::string message) {
  return fail(ErrorKind::invalid_argument, std::move(message));
}

// Checks the breaks of `spec` against its end stations; empty when they are fine.
std::optional<std::unexpected<Error>> check_breaks(const SectionSpec& spec) {
  const double first = spec.points.front().first;
  const double last = spec.points.back().first;
  if (spec.breaks.size() + 1 > max_subsections) {
    return invalid(fmt::format("The surveyed section has {} breaks; at most {} are allowed.",
                               spec.breaks.size(), max_subsections - 1));
  }
  for (std::size_t i = 0; i < spec.breaks.size(); ++i) {
    const double station = spec.breaks[i];
    if (!std::isfinite(station) || station <= first || station >= last) {
      return invalid(fmt::format(
          "Break {} of the surveyed section is at station {}; it must lie strictly between the "
          "first and last stations ({} and {}).",
          i + 1, station, first, last));
    }
    if (i > 0 && station <= spec.breaks[i - 1]) {
      return invalid(fmt::format(
          "Break {} of the surveyed section (station {}) is not beyond the one before it ({}); "
          "breaks must be in increasing order of station.",
          i + 1, station, spec.breaks[i - 1]));
    }
  }
  return std::nullopt;
}

// The points with one inserted on the ground line at every break that falls inside a segment.
std::vector<Point> with_break_points(const std::vector<Point>& points,
                                     const std::vector<double>& breaks) {
  std::vector<Point> out;
  out.reserve(points.size() + breaks.size());
  out.push_back(points.front());
  auto next_break = breaks.begin();
  for (std::size_t i = 1; i < points.size(); ++i) {
    const auto [x0, z0] = points[i - 1];
    const auto [x1, z1] = points[i];
    while (next_break != breaks.end() && *next_break <= x0) ++next_break;
    for (; next_break != breaks.end() && *next_break < x1; ++next_break) {
      const double fraction = (*next_break - x0) / (x1 - x0);
      out.emplace_back(*next_break, z0 + fraction * (z1 - z0));
    }
    out.push_back(points[i]);
  }
  return out;
}

// Which subsection a segment from (x0, h0) to (x1, h1) belongs to. A vertical wall standing on a
// break belongs to the side its water is on: the left one if the ground rises left to right.
std::uint32_t subsection_of(const std::vector<double>& breaks, double x0, double h0, double x1,
                            double h1) {
  const bool wall_rising_at_break =
      x0 == x1 && h1 > h0 && std::binary_search(breaks.begin(), breaks.end(), x0);
  const auto bound = wall_rising_at_break ? std::lower_bound(breaks.begin(), breaks.end(), x0)
                                          : std::upper_bound(breaks.begin(), breaks.end(), x0);
  return static_cast<std::uint32_t>(bound - breaks.begin());
}

}  // namespace

Result<std::unique_ptr<const Section>> make_surveyed(const SectionSpec& spec) {
  const auto& points = spec.points;
  if (points.size() < 3) {
    return invalid(fmt::format(
        "The surveyed section has {} points; it needs at least 3 (two banks and a low point).",
        points.size()));
  }
  for (std::size_t i = 0; i < points.size(); ++i) {
    const auto [station, elevation] = points[i];
    if (!std::isfinite(station) || !std::isfinite(elevation)) {
      return invalid(
          fmt::format("Point {} of the surveyed section ({}, {}) is not a pair of finite numbers.",
                      i + 1, station, elevation));
    }
    if (i > 0 && station < points[i - 1].first) {
      return invalid(fmt::format(
          "Point {} of the surveyed section is at station {}, before the point ahead of it ({}); "
          "stations must never decrease.",
          i + 1, station, points[i - 1].first));
    }
  }
  if (!(points.back().first > points.front().first)) {
    return invalid("The surveyed section's points all share one station, so it has no width.");
  }
  double lowest = points.front().second;
  for (const auto& point : points) lowest = std::min(lowest, point.second);
  if (!(points.front().second > lowest) || !(points.back().second > lowest)) {
    return invalid(fmt::format(
        "The surveyed section does not rise to a bank on both sides: its {} point is at the "
        "lowest elevation ({}).",
        points.front().second > lowest ? "last" : "first", lowest));
  }
  if (auto error = check_breaks(spec)) return *error;

  std::vector<Point> ground = with_break_points(points, spec.breaks);
  for (auto& point : ground) point.second -= lowest;

  std::vector<Segment> segments;
  segments.reserve(ground.size() - 1);
  std::vector<double> depths;
  for (std::size_t i = 1; i < ground.size(); ++i) {
    const auto [x0, h0] = ground[i - 1];
    const auto [x1, h1] = ground[i];
    Segment s;
    s.low = std::min(h0, h1);
    s.high = std::max(h0, h1);
    s.middle = 0.5 * (s.low + s.high);
    s.width = x1 - x0;
    s.length = std::hypot(x1 - x0, h1 - h0);
    s.inverse_rise = s.high > s.low ? 1.0 / (s.high - s.low) : 0.0;
    s.subsection = subsection_of(spec.breaks, x0, h0, x1, h1);
    segments.push_back(s);
  }

  const double left_bank = ground.front().second;
  const double right_bank = ground.back().second;
  const double top = std::min(left_bank, right_bank);
  for (const auto& point : ground) {
    if (point.second > 0.0 && point.second < top) depths.push_back(point.second);
  }
  depths.push_back(top);
  std::sort(depths.begin(), depths.end());
  depths.erase(std::unique(depths.begin(), depths.end()), depths.end());

  return std::make_unique<SurveyedSection>(std::move(segments), spec.breaks.size() + 1, left_bank,
                                           right_bank, std::move(depths));
}

}  // namespace stagewell::detail
