// The rating plot: stage against discharge with the band and the gaugings, and the gaugings'
// differences in a panel below sharing the discharge axis.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "daily/plot_frame.hpp"
#include "stagewell/plot.hpp"

namespace stagewell::plot {
namespace {

using namespace plot_detail;

constexpr double kPageHeight = 780;
constexpr const char* kGrid = "stroke:#d0d0d0;stroke-width:1";

// Vertical grid lines at `ticks`; labels and the axis title under the panel when `title` is set.
void draw_x_axis(Svg& svg, const Panel& panel, const std::vector<Tick>& ticks,
                 const std::string& title) {
  svg.begin_group("x-axis");
  for (const Tick& tick : ticks) {
    const double x = panel.x(tick.value);
    if (x < kLeft - 0.5 || x > kLeft + kPlotWidth + 0.5) continue;
    svg.line({x, panel.top}, {x, panel.bottom()}, kGrid);
    if (title.empty()) continue;
    svg.line({x, panel.bottom()}, {x, panel.bottom() + 5}, "stroke:#000000;stroke-width:1.2");
    svg.text({x, panel.bottom() + 19}, tick.label, Anchor::middle, kFontSize - 1);
  }
  if (!title.empty()) {
    svg.text({kLeft + kPlotWidth / 2, panel.bottom() + 40}, title, Anchor::middle, kFontSize);
  }
  svg.end_group();
}

// A hollow circle: told apart from the line by shape, not colour alone.
void gauging_mark(Svg& svg, Point at) {
  svg.circle(at, 4.5, "fill:#ffffff;stroke:#b2182b;stroke-width:1.8");
}

}  // namespace

std::string rating_svg(const std::vector<RatingCurvePoint>& curve,
                       const std::vector<RatingGauging>& gaugings, const RatingSpec& spec) {
  Svg svg(kPageWidth, kPageHeight);
  const double factor = spec.units.flow_factor;
  double q_high = 0.0;
  double stage_low = curve.front().stage;
  double stage_high = curve.back().stage;
  for (const auto& point : curve) {
    q_high = std::max(q_high, point.high.value_or(point.discharge) * factor);
  }
  double worst_difference = 5.0;  // percent: the residual axis spans at least ±5 %
  for (const auto& g : gaugings) {
    q_high = std::max(q_high, g.measured * factor);
    stage_low = std::min(stage_low, g.stage);
    stage_high = std::max(stage_high, g.stage);
    if (g.difference_percent && std::isfinite(*g.difference_percent)) {
      worst_difference = std::max(worst_difference, std::abs(*g.difference_percent));
    }
  }
  const LinearAxis q_axis = linear_axis(0.0, q_high > 0.0 ? q_high : 1.0, 8, true);
  const LinearAxis stage_axis =
      linear_axis(stage_low, stage_high > stage_low ? stage_high : stage_low + 1.0, 7, false);
  const LinearAxis difference_axis = linear_axis(-worst_difference, worst_difference, 4, true);
  const Panel main{70, 430, q_axis.low, q_axis.high, stage_axis.low, stage_axis.high};
  const Panel residuals{
      560, 130, q_axis.low, q_axis.high, difference_axis.low, difference_axis.high};

  draw_title(svg, spec.title, spec.subtitle);
  draw_x_axis(svg, main, q_axis.ticks, "");
  draw_y_axis(svg, main, stage_axis.ticks, fmt::format("Stage ({})", spec.stage_symbol));

  // The band: up the low ends, back down the high ends.
  const bool banded =
      std::all_of(curve.begin(), curve.end(), [](const auto& p) { return p.low && p.high; });
  if (banded) {
    std::string path;
    for (const auto& p : curve) {
      path += fmt::format("{}{},{} ", path.empty() ? "M" : "L", coord(main.x(*p.low * factor)),
                          coord(main.y(p.stage)));
    }
    for (auto p = curve.rbegin(); p != curve.rend(); ++p) {
      path += fmt::format("L{},{} ", coord(main.x(*p->high * factor)), coord(main.y(p->stage)));
    }
    path += "Z";
    svg.begin_group("band");
    svg.path(path, "fill:#9ecae1;fill-opacity:0.5;stroke:none");
    svg.end_group();
  }
  std::vector<Point> line;
  for (const auto& p : curve) line.push_back({main.x(p.discharge * factor), main.y(p.stage)});
  svg.begin_group("rating");
  svg.polyline(line, "stroke:#08306b;stroke-width:2;stroke-linejoin:round");
  svg.end_group();
  svg.begin_group("gaugings");
  for (const auto& g : gaugings) gauging_mark(svg, {main.x(g.measured * factor), main.y(g.stage)});
  svg.end_group();

  // The differences, against the same discharge axis.
  draw_x_axis(svg, residuals, q_axis.ticks,
              fmt::format("Discharge ({})", units::symbol(spec.units.flow)));
  draw_y_axis(svg, residuals, difference_axis.ticks, "Difference (%)");
  svg.line({kLeft, residuals.y(0.0)}, {kLeft + kPlotWidth, residuals.y(0.0)},
           "stroke:#000000;stroke-width:1");
  std::size_t without = 0;
  svg.begin_group("differences");
  for (const auto& g : gaugings) {
    if (!g.difference_percent || !std::isfinite(*g.difference_percent)) {
      ++without;
      continue;
    }
    gauging_mark(svg, {residuals.x(g.measured * factor), residuals.y(*g.difference_percent)});
  }
  svg.end_group();

  std::string legend = fmt::format(
      "Line: computed discharge. Circles: {} gauging{}. Lower panel: 100 (measured - computed) / "
      "computed",
      gaugings.size(), gaugings.size() == 1 ? "" : "s");
  if (without > 0) legend += fmt::format(" ({} without a computed discharge not shown)", without);
  svg.text({kLeft, residuals.bottom() + 62}, legend + ".", Anchor::start, kFontSize - 1);
  if (banded && !spec.band_note.empty()) {
    svg.text({kLeft, residuals.bottom() + 80}, "Shaded: " + spec.band_note, Anchor::start,
             kFontSize - 1);
  }
  draw_caution(svg, kPageHeight - 12);
  return svg.finish();
}

}  // namespace stagewell::plot
