#include "daily/plot_frame.hpp"

namespace stagewell::plot_detail {
namespace {
constexpr const char* kGrid = "stroke:#d0d0d0;stroke-width:1";
constexpr const char* kFrame = "fill:none;stroke:#000000;stroke-width:1.2";
}  // namespace

void draw_y_axis(Svg& svg, const Panel& panel, const std::vector<Tick>& ticks,
                 const std::string& title) {
  svg.begin_group("y-axis");
  for (const Tick& tick : ticks) {
    const double y = panel.y(tick.value);
    if (y < panel.top - 0.5 || y > panel.bottom() + 0.5) continue;
    svg.line({kLeft, y}, {kLeft + kPlotWidth, y}, kGrid);
    svg.line({kLeft - 5, y}, {kLeft, y}, "stroke:#000000;stroke-width:1.2");
    svg.text({kLeft - 8, y + 4}, tick.label, Anchor::end, kFontSize - 1);
  }
  svg.rect(kLeft, panel.top, kPlotWidth, panel.height, kFrame);
  svg.text({24, panel.top + panel.height / 2}, title, Anchor::middle, kFontSize, -90);
  svg.end_group();
}

void draw_time_axis(Svg& svg, const Panel& panel, const std::vector<TimeTick>& ticks,
                    bool labelled) {
  svg.begin_group("x-axis");
  for (const TimeTick& tick : ticks) {
    const double x = panel.x(static_cast<double>(tick.time_ms));
    svg.line({x, panel.top}, {x, panel.bottom()}, kGrid);
    if (!labelled) continue;
    svg.line({x, panel.bottom()}, {x, panel.bottom() + 5}, "stroke:#000000;stroke-width:1.2");
    svg.text({x, panel.bottom() + 19}, tick.label, Anchor::middle, kFontSize - 1);
    if (!tick.detail.empty()) {
      svg.text({x, panel.bottom() + 34}, tick.detail, Anchor::middle, kFontSize - 1);
    }
  }
  svg.end_group();
}

void draw_title(Svg& svg, const std::string& title, const std::string& subtitle) {
  svg.text({kPageWidth / 2, 26}, title, Anchor::middle, kFontSize + 3, 0, "font-weight:bold");
  svg.text({kPageWidth / 2, 45}, subtitle, Anchor::middle, kFontSize - 1);
}

void draw_caution(Svg& svg, double y) {
  svg.text({kLeft, y},
           "Caution: discharge from Manning's equation is an estimate; verify it with field "
           "measurements.",
           Anchor::start, kFontSize - 1, 0, "font-style:italic");
}

}  // namespace stagewell::plot_detail
