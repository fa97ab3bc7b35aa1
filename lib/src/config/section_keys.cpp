// The `section` of a site. Which keys a section takes depends on its shape, so its table has one
// column per shape; a key of another shape is an error that names the shapes that use it.
//
// The geometry is validated here, not by make_section(): validation must report every problem
// with its line, and must not depend on the hydraulics module.
#include <fmt/format.h>

#include <algorithm>
#include <array>

#include "config/readers.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

constexpr std::array<std::pair<std::string_view, Shape>, 5> kShapes{{
    {"rectangular", Shape::rectangular},
    {"trapezoidal", Shape::trapezoidal},
    {"triangular", Shape::triangular},
    {"circular", Shape::circular},
    {"surveyed", Shape::surveyed},
}};

// The shape columns of the table below are indexed by the enumerator's value.
static_assert([] {
  for (std::size_t i = 0; i < kShapes.size(); ++i) {
    if (static_cast<std::size_t>(kShapes[i].second) != i) return false;
  }
  return true;
}());

std::string_view shape_name(Shape shape) {
  for (const auto& [name, value] : kShapes) {
    if (value == shape) return name;
  }
  return "?";
}

std::optional<Shape> parse_shape(std::string_view text) {
  for (const auto& [name, value] : kShapes) {
    if (name == text) return value;
  }
  return std::nullopt;
}

enum class Use { no, required, optional };
constexpr Use R = Use::required;
constexpr Use O = Use::optional;
constexpr Use N = Use::no;

// Side slopes are horizontal per 1 vertical: 0 is a vertical wall. A trapezoid may have two; a
// triangle may have one (a gutter against a kerb) but not two, which would hold no water.
void read_side_slope(const At& at, Context& cx, SectionSpec& out) {
  const bool triangular = out.shape == Shape::triangular;
  if (at.node.IsSequence()) {
    if (at.node.size() != 2) {
      cx.error(at, "must be one number for both sides, or [left, right]");
      return;
    }
    const auto left = number_value(element(at, 0), cx, Bounds::at_least(0.0));
    const auto right = number_value(element(at, 1), cx, Bounds::at_least(0.0));
    if (!left || !right) return;
    if (triangular && *left == 0.0 && *right == 0.0) {
      cx.error(at, "a triangular section needs at least one side slope greater than 0");
      return;
    }
    out.side_slope_left = *left;
    out.side_slope_right = *right;
  } else if (const auto both =
                 number_value(at, cx, triangular ? Bounds::above(0.0) : Bounds::at_least(0.0))) {
    out.side_slope_left = *both;
    out.side_slope_right = *both;
  }
}

// The surveyed points, (station, elevation) in order across the channel. They must describe a
// channel that holds water: at least 3 points, stations that never go back, and a first and last
// point (the banks) above the lowest point.
void read_points(const At& at, Context& cx, SectionSpec& out) {
  if (!at.node.IsSequence()) {
    cx.error(at, "must be a list of [station, elevation] points");
    return;
  }
  std::vector<std::pair<double, double>> points;
  bool readable = true;
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At point = element(at, i);
    if (!point.node.IsSequence() || point.node.size() != 2) {
      cx.error(point, "a point must be [station, elevation]");
      readable = false;
      continue;
    }
    const auto station = number_value(element(point, 0), cx, Bounds::any());
    const auto elevation = number_value(element(point, 1), cx, Bounds::any());
    if (!station || !elevation) {
      readable = false;
      continue;
    }
    points.emplace_back(*station, *elevation);
  }
  if (!readable) return;
  const std::size_t before = cx.error_count();
  if (points.size() < 3) {
    cx.error(at,
             fmt::format("needs at least 3 points [station, elevation]; got {}", points.size()));
    return;
  }
  for (std::size_t i = 1; i < points.size(); ++i) {
    if (points[i].first < points[i - 1].first) {
      cx.error(element(at, i), fmt::format("stations must not decrease: {} comes after {}",
                                           points[i].first, points[i - 1].first));
    }
  }
  if (points.back().first <= points.front().first) {
    cx.error(at, "the last station must be greater than the first: the section has no width");
  }
  const double lowest =
      std::min_element(points.begin(), points.end(), [](const auto& a, const auto& b) {
        return a.second < b.second;
      })->second;
  const auto check_bank = [&](std::size_t i, std::string_view side) {
    if (points[i].second <= lowest) {
      cx.error(element(at, i),
               fmt::format("the section must rise to a bank on both sides: the {} point "
                           "(elevation {}) is not higher than the lowest point ({})",
                           side, points[i].second, lowest));
    }
  };
  check_bank(0, "first");
  check_bank(points.size() - 1, "last");
  if (cx.error_count() == before) out.points = std::move(points);
}

// Stations that divide a surveyed section into subsections (left overbank, main channel, right
// overbank...), each with its own roughness. Kept even when out of order, so that the roughness
// list can still be counted against them.
void read_breaks(const At& at, Context& cx, SectionSpec& out) {
  if (!at.node.IsSequence()) {
    cx.error(at, "must be a list of stations, e.g. [1.0, 3.5]");
    return;
  }
  if (at.node.size() + 1 > max_subsections) {
    cx.error(at, fmt::format("at most {} breaks ({} subsections)", max_subsections - 1,
                             max_subsections));
    return;
  }
  std::vector<double> breaks;
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At entry = element(at, i);
    const auto station = number_value(entry, cx, Bounds::any());
    if (!station) return;
    if (!breaks.empty() && *station <= breaks.back()) {
      cx.error(entry, fmt::format("breaks must increase: {} is not greater than {}", *station,
                                  breaks.back()));
    }
    breaks.push_back(*station);
  }
  out.breaks = std::move(breaks);
}

Read<double> positive() { return number(Bounds::above(0.0)); }

struct ShapeRow {
  std::string_view name;
  std::array<Use, 5> use;  // rectangular, trapezoidal, triangular, circular, surveyed
  Store<SectionSpec> store;
};

const std::vector<ShapeRow>& shape_rows() {
  // Lengths in the configuration's length unit (m or ft). R: required, O: optional, N: not used.
  // clang-format off
  static const std::vector<ShapeRow> rows{
      //              rect tra tri cir sur
      {"width",      {R,   R,  N,  N,  N}, into(positive(), &SectionSpec::width)},
      {"side_slope", {N,   R,  R,  N,  N}, read_side_slope},
      {"diameter",   {N,   N,  N,  R,  N}, into(positive(), &SectionSpec::diameter)},
      {"points",     {N,   N,  N,  N,  R}, read_points},
      {"breaks",     {N,   N,  N,  N,  O}, read_breaks},
      {"height",     {R,   R,  R,  N,  N}, into(positive(), &SectionSpec::height)},
  };
  // clang-format on
  return rows;
}

// "not used by a circular section (only by rectangular, trapezoidal)"
std::string not_used_reason(const ShapeRow& row, Shape shape) {
  std::string users;
  for (std::size_t i = 0; i < kShapes.size(); ++i) {
    if (row.use[i] == N) continue;
    users += (users.empty() ? "" : ", ") + std::string(kShapes[i].first);
  }
  return fmt::format("not used by a {} section (only by {})", shape_name(shape), users);
}

// Every break strictly inside the section: a break at or beyond a bank would make an empty
// subsection.
void check_breaks_inside(const At& at, Context& cx, const SectionSpec& section) {
  if (section.points.empty() || section.breaks.empty()) return;
  const auto breaks = find(at, "breaks");
  if (!breaks) return;
  const double first = section.points.front().first;
  const double last = section.points.back().first;
  for (std::size_t i = 0; i < section.breaks.size(); ++i) {
    if (section.breaks[i] <= first || section.breaks[i] >= last) {
      cx.error(element(*breaks, i),
               fmt::format("must lie strictly between the first station ({}) and the last ({})",
                           first, last));
    }
  }
}

}  // namespace

bool read_section(const At& at, Context& cx, SectionSpec& out) {
  const std::size_t before = cx.error_count();
  // The shape decides which rows apply; when it cannot be read, the other keys are still checked
  // for spelling but not read.
  std::optional<Shape> shape;
  if (const auto written = find(at, "shape"); written && written->node.IsScalar()) {
    shape = parse_shape(written->node.Scalar());
  }
  std::vector<std::string_view> shape_names;
  for (const auto& [name, value] : kShapes) shape_names.push_back(name);

  std::vector<Key<SectionSpec>> keys;
  keys.push_back({"shape", required(), [shape_names](const At& value, Context& c, SectionSpec& s) {
                    if (const auto name = one_of(shape_names)(value, c))
                      s.shape = *parse_shape(*name);
                  }});
  for (const auto& row : shape_rows()) {
    Presence presence = ignored();
    if (shape) {
      switch (row.use[static_cast<std::size_t>(*shape)]) {
        case R:
          presence = required();
          break;
        case O:
          presence = optional();
          break;
        case N:
          presence = not_here(not_used_reason(row, *shape));
          break;
      }
    }
    keys.push_back({row.name, std::move(presence), row.store});
  }
  read_map(at, keys, cx, out);
  if (shape == Shape::surveyed) check_breaks_inside(at, cx, out);
  return cx.error_count() == before;
}

}  // namespace stagewell::config_detail
