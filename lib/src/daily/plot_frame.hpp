// What both plots share: the page, a panel's mapping from values to pixels, its axes and grid,
// and the caution line.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "daily/axes.hpp"
#include "daily/svg.hpp"

namespace stagewell::plot_detail {

inline constexpr double kPageWidth = 1000;
inline constexpr double kLeft = 90;   // room for the y tick labels and axis title
inline constexpr double kRight = 50;  // room for the last time label
inline constexpr double kPlotWidth = kPageWidth - kLeft - kRight;
inline constexpr double kFontSize = 13;  // readable when printed at A4/letter width

// A rectangle of the page and the ranges it shows.
struct Panel {
  double top = 0.0;
  double height = 0.0;
  double x_low = 0.0;  // data at the left and right edges
  double x_high = 1.0;
  double y_low = 0.0;  // data at the bottom and top edges (log10 of it on a log axis)
  double y_high = 1.0;

  double x(double value) const { return kLeft + (value - x_low) / (x_high - x_low) * kPlotWidth; }
  double y(double value) const { return top + (1.0 - (value - y_low) / (y_high - y_low)) * height; }
  double bottom() const { return top + height; }
};

// The panel's frame, horizontal grid lines and labelled ticks at `ticks` (values in the panel's
// y units), and the y axis title.
void draw_y_axis(Svg& svg, const Panel& panel, const std::vector<Tick>& ticks,
                 const std::string& title);

// Vertical grid lines at `ticks` (positions in x units); labels under the panel when `labelled`.
void draw_time_axis(Svg& svg, const Panel& panel, const std::vector<TimeTick>& ticks,
                    bool labelled);

// The centred title and the caution line at the foot of the page.
void draw_title(Svg& svg, const std::string& title, const std::string& subtitle);
void draw_caution(Svg& svg, double y);

}  // namespace stagewell::plot_detail
