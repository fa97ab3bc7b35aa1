// The flow-duration curve: daily mean discharge (log scale) against exceedance.
#include <fmt/format.h>

#include <cmath>

#include "daily/plot_frame.hpp"
#include "stagewell/plot.hpp"

namespace stagewell::plot {
namespace {

using namespace plot_detail;

constexpr double kPageHeight = 720;

std::string shown(double value) {
  // Four significant digits, as the tables print them.
  if (value == 0.0) return "0";
  const int digits = static_cast<int>(std::floor(std::log10(std::abs(value)))) + 1;
  return fmt::format("{:.{}f}", value, std::max(0, 4 - digits));
}

}  // namespace

std::string duration_svg(const stats::FlowDuration& duration, const DurationSpec& spec) {
  Svg svg(kPageWidth, kPageHeight);
  const double factor = spec.units.flow_factor;
  double low = INFINITY;
  double high = -INFINITY;
  std::size_t zero_days = 0;
  for (const auto& point : duration.curve) {
    const double q = point.mean_discharge * factor;
    if (!(q > 0.0)) {
      ++zero_days;
      continue;
    }
    low = std::min(low, q);
    high = std::max(high, q);
  }
  const bool any = low <= high;
  const LogAxis axis = log_axis(any ? low : 0.1, any ? high : 1.0);
  const Panel panel{70, 520, 0.0, 100.0, std::log10(axis.low), std::log10(axis.high)};

  draw_title(
      svg, spec.title,
      fmt::format("Flow-duration curve, {}, {} complete days", spec.period, duration.curve.size()));
  svg.begin_group("x-axis");
  for (int percent = 0; percent <= 100; percent += 10) {
    const double x = panel.x(percent);
    svg.line({x, panel.top}, {x, panel.bottom()}, "stroke:#d0d0d0;stroke-width:1");
    svg.line({x, panel.bottom()}, {x, panel.bottom() + 5}, "stroke:#000000;stroke-width:1.2");
    svg.text({x, panel.bottom() + 19}, fmt::format("{}", percent), Anchor::middle, kFontSize - 1);
  }
  svg.text({kLeft + kPlotWidth / 2, panel.bottom() + 40},
           "Share of days the daily mean discharge was equalled or exceeded (%)", Anchor::middle,
           kFontSize);
  svg.end_group();
  std::vector<Tick> ticks;
  for (const Tick& tick : axis.ticks) ticks.push_back({std::log10(tick.value), tick.label});
  draw_y_axis(svg, panel, ticks,
              fmt::format("Daily mean discharge ({}), log scale", units::symbol(spec.units.flow)));

  std::vector<Point> curve;
  for (const auto& point : duration.curve) {
    const double q = point.mean_discharge * factor;
    if (q > 0.0) curve.push_back({panel.x(point.exceedance * 100.0), panel.y(std::log10(q))});
  }
  svg.begin_group("duration");
  if (curve.size() == 1) {
    svg.circle(curve.front(), 2.5, "fill:#08306b");
  } else {
    svg.polyline(curve, "stroke:#08306b;stroke-width:1.8;stroke-linejoin:round");
  }
  svg.end_group();

  // The reported exceedance values, marked on the curve and listed under it.
  std::string listed;
  svg.begin_group("exceedance");
  for (std::size_t k = 0; k < stats::kReportedPercents.size(); ++k) {
    const auto& q = duration.exceeded[k];
    const double percent = stats::kReportedPercents[k];
    listed += fmt::format("{}Q{} {}", listed.empty() ? "" : "   ", percent,
                          q ? shown(*q * factor) : "n/a");
    if (q && *q * factor > 0.0) {
      svg.circle({panel.x(percent), panel.y(std::log10(*q * factor))}, 3.5,
                 "fill:#ffffff;stroke:#b2182b;stroke-width:1.6");
    }
  }
  svg.end_group();
  svg.text({kLeft, panel.bottom() + 66},
           fmt::format("Flow exceeded ({}): {}", units::symbol(spec.units.flow), listed),
           Anchor::start, kFontSize - 1);
  std::string note = fmt::format(
      "Weibull plotting position m/(n+1), ties at their mean rank; {} "
      "days with missing time or no figures left out",
      duration.days_left_out);
  if (zero_days > 0) note += fmt::format("; {} days of zero flow not shown (log scale)", zero_days);
  svg.text({kLeft, panel.bottom() + 84}, note, Anchor::start, kFontSize - 1);
  if (!any) {
    svg.text({kLeft + kPlotWidth / 2, panel.top + panel.height / 2},
             "No complete days with flow in this period", Anchor::middle, kFontSize + 2);
  }
  draw_caution(svg, kPageHeight - 12);
  return svg.finish();
}

}  // namespace stagewell::plot
