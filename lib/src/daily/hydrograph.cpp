// The hydrograph: discharge and stage against local time, gaps left open, flagged readings marked.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <map>
#include <set>

#include "daily/plot_frame.hpp"
#include "stagewell/plot.hpp"
#include "stagewell/uncertainty.hpp"

namespace stagewell::plot {
namespace {

using namespace plot_detail;

constexpr double kPageHeight = 760;
constexpr int kColumnsPerPixel = 2;  // decimation: buckets per pixel of width

// How the daily figures treat a flagged reading, which decides its marker.
enum class Mark { missing, bridged, used };

struct MarkStyle {
  const char* name;    // legend text
  const char* colour;  // print-safe, told apart by shape too
};

constexpr MarkStyle kMarkStyles[] = {
    {"left out, time missing", "#b2182b"},  // cross
    {"left out, bridged", "#d95f02"},       // triangle
    {"flagged, used", "#1b7837"},           // circle
};

Mark mark_of(const PlotReading& r, const HydrographSpec& spec) {
  if ((r.flags.bits() & spec.excluded.bits()) != 0) return Mark::missing;
  if ((r.flags.bits() & spec.bridged.bits()) != 0) return Mark::bridged;
  return r.discharge ? Mark::used : Mark::missing;
}

void draw_mark(Svg& svg, Mark mark, Point p) {
  const std::string colour = kMarkStyles[static_cast<int>(mark)].colour;
  switch (mark) {
    case Mark::missing:
      svg.path(fmt::format("M{} {}L{} {}M{} {}L{} {}", coord(p.x - 4), coord(p.y - 4),
                           coord(p.x + 4), coord(p.y + 4), coord(p.x - 4), coord(p.y + 4),
                           coord(p.x + 4), coord(p.y - 4)),
               "fill:none;stroke:" + colour + ";stroke-width:2");
      break;
    case Mark::bridged:
      svg.path(fmt::format("M{} {}L{} {}L{} {}Z", coord(p.x), coord(p.y - 5), coord(p.x + 4.5),
                           coord(p.y + 3.5), coord(p.x - 4.5), coord(p.y + 3.5)),
               "fill:none;stroke:" + colour + ";stroke-width:1.6");
      break;
    case Mark::used:
      svg.circle(p, 3.5, "fill:none;stroke:" + colour + ";stroke-width:1.6");
      break;
  }
}

// The runs of a series between gaps, in pixels. Readings that fall in one bucket (a fraction of a
// pixel wide) are drawn as its first, lowest, highest and last value, so no peak is lost.
std::vector<std::vector<Point>> runs_of(
    const std::vector<PlotReading>& readings,
    const std::function<std::optional<double>(const PlotReading&)>& value_of, const Panel& panel,
    std::int64_t max_gap_ms) {
  std::vector<std::vector<Point>> runs;
  std::vector<Point> run;
  std::vector<Point> bucket;  // the points of the current bucket, in time order
  long bucket_index = 0;
  auto flush_bucket = [&] {
    if (bucket.empty()) return;
    const auto [low, high] = std::minmax_element(bucket.begin(), bucket.end(),
                                                 [](Point a, Point b) { return a.y < b.y; });
    std::vector<std::size_t> keep{0, static_cast<std::size_t>(low - bucket.begin()),
                                  static_cast<std::size_t>(high - bucket.begin()),
                                  bucket.size() - 1};
    std::sort(keep.begin(), keep.end());
    keep.erase(std::unique(keep.begin(), keep.end()), keep.end());
    for (const std::size_t i : keep) run.push_back(bucket[i]);
    bucket.clear();
  };
  auto end_run = [&] {
    flush_bucket();
    if (!run.empty()) runs.push_back(std::move(run));
    run.clear();
  };
  std::optional<std::int64_t> previous_ms;
  for (const PlotReading& r : readings) {
    const auto value = value_of(r);
    if (!value) {  // no value: the line stops here
      end_run();
      previous_ms.reset();
      continue;
    }
    if (previous_ms && r.time_ms - *previous_ms > max_gap_ms) end_run();
    previous_ms = r.time_ms;
    const Point p{panel.x(static_cast<double>(r.time_ms)), panel.y(*value)};
    const long index = std::lround(std::floor(p.x * kColumnsPerPixel));
    if (!bucket.empty() && index != bucket_index) flush_bucket();
    bucket_index = index;
    bucket.push_back(p);
  }
  end_run();
  return runs;
}

void draw_series(Svg& svg, const std::vector<std::vector<Point>>& runs, const char* cls,
                 std::string_view style) {
  svg.begin_group(cls);
  for (const auto& run : runs) {
    if (run.size() == 1) {
      svg.circle(run.front(), 1.5, "fill:#000000");  // a lone reading between gaps
    } else {
      svg.polyline(run, style);
    }
  }
  svg.end_group();
}

// The band between two sets of runs (the low ends' and the high ends', broken at the same
// readings), shaded: each pair of runs is one closed path, along the highs and back the lows.
void draw_band(Svg& svg, const std::vector<std::vector<Point>>& lows,
               const std::vector<std::vector<Point>>& highs) {
  svg.begin_group("band");
  for (std::size_t i = 0; i < lows.size() && i < highs.size(); ++i) {
    if (highs[i].size() < 2) continue;
    std::string data;
    for (const Point& p : highs[i]) {
      data += fmt::format("{}{},{} ", data.empty() ? "M" : "L", coord(p.x), coord(p.y));
    }
    for (auto p = lows[i].rbegin(); p != lows[i].rend(); ++p) {
      data += fmt::format("L{},{} ", coord(p->x), coord(p->y));
    }
    data += "Z";
    svg.path(data, "fill:#6baed6;fill-opacity:0.35;stroke:none");
  }
  svg.end_group();
}

struct MinMax {
  double low = INFINITY;
  double high = -INFINITY;
  void add(double v) {
    low = std::min(low, v);
    high = std::max(high, v);
  }
  bool any() const { return low <= high; }
};

}  // namespace

std::string hydrograph_svg(const std::vector<PlotReading>& readings, const HydrographSpec& spec) {
  Svg svg(kPageWidth, kPageHeight);
  const double flow_factor = spec.units.flow_factor;
  MinMax flow;
  MinMax stage;
  for (const PlotReading& r : readings) {
    if (r.discharge) flow.add(*band_high(r.discharge, r.band) * flow_factor);
    stage.add(r.stage);
  }
  const LinearAxis flow_axis =
      linear_axis(flow.any() ? flow.low : 0, flow.any() ? flow.high : 1, 6, true);
  const LinearAxis stage_axis =
      linear_axis(stage.any() ? stage.low : 0, stage.any() ? stage.high : 1, 4, false);
  const Panel flow_panel{70,
                         330,
                         static_cast<double>(spec.from_ms),
                         static_cast<double>(spec.to_ms),
                         flow_axis.low,
                         flow_axis.high};
  const Panel stage_panel{425,
                          170,
                          static_cast<double>(spec.from_ms),
                          static_cast<double>(spec.to_ms),
                          stage_axis.low,
                          stage_axis.high};

  draw_title(svg, spec.title, fmt::format("{}, {} readings", spec.period, readings.size()));
  const auto ticks = plot_detail::time_ticks(spec.from_ms, spec.to_ms, spec.zone, 8);
  draw_time_axis(svg, flow_panel, ticks, false);
  draw_time_axis(svg, stage_panel, ticks, true);
  draw_y_axis(svg, flow_panel, flow_axis.ticks,
              fmt::format("Discharge ({})", units::symbol(spec.units.flow)));
  draw_y_axis(svg, stage_panel, stage_axis.ticks, fmt::format("Stage ({})", spec.stage_symbol));
  svg.text({kLeft + kPlotWidth / 2, stage_panel.bottom() + 52},
           fmt::format("Local time ({})", spec.zone.name()), Anchor::middle, kFontSize);

  const auto scaled = [flow_factor](std::optional<double> q) -> std::optional<double> {
    if (!q) return std::nullopt;
    return *q * flow_factor;
  };
  draw_band(
      svg,
      runs_of(
          readings, [&](const PlotReading& r) { return scaled(band_low(r.discharge, r.band)); },
          flow_panel, spec.max_gap_ms),
      runs_of(
          readings, [&](const PlotReading& r) { return scaled(band_high(r.discharge, r.band)); },
          flow_panel, spec.max_gap_ms));
  draw_series(svg,
              runs_of(
                  readings, [&](const PlotReading& r) { return scaled(r.discharge); }, flow_panel,
                  spec.max_gap_ms),
              "discharge", "stroke:#08306b;stroke-width:1.6;stroke-linejoin:round");
  draw_series(svg,
              runs_of(
                  readings, [](const PlotReading& r) -> std::optional<double> { return r.stage; },
                  stage_panel, spec.max_gap_ms),
              "stage", "stroke:#404040;stroke-width:1.4;stroke-linejoin:round");

  // Markers, one per mark and pixel: a year of flags stays a readable (and small) picture.
  std::set<std::tuple<int, long, long>> drawn;
  std::map<Mark, Flags> legend;
  svg.begin_group("flagged");
  for (const PlotReading& r : readings) {
    if (r.flags.empty()) continue;
    const Mark mark = mark_of(r, spec);
    legend[mark] |= r.flags;
    const double x = flow_panel.x(static_cast<double>(r.time_ms));
    std::vector<Point> at{{x, stage_panel.y(r.stage)}};
    if (r.discharge) at.push_back({x, flow_panel.y(*r.discharge * flow_factor)});
    for (const Point& p : at) {
      if (drawn.emplace(static_cast<int>(mark), std::lround(p.x), std::lround(p.y)).second) {
        draw_mark(svg, mark, p);
      }
    }
  }
  svg.end_group();

  svg.begin_group("legend");
  double legend_y = stage_panel.bottom() + 74;
  if (readings.empty()) {
    svg.text({kLeft + kPlotWidth / 2, flow_panel.top + flow_panel.height / 2},
             "No readings in this period", Anchor::middle, kFontSize + 2);
  }
  for (const auto& [mark, flags] : legend) {
    draw_mark(svg, mark, {kLeft + 6, legend_y - 4});
    svg.text({kLeft + 18, legend_y},
             fmt::format("{}: {}", kMarkStyles[static_cast<int>(mark)].name, flags.joined(' ')),
             Anchor::start, kFontSize - 1);
    legend_y += 17;
  }
  if (std::any_of(readings.begin(), readings.end(), [](const PlotReading& r) { return r.band; })) {
    svg.rect(kLeft, legend_y - 10, 12, 10, "fill:#6baed6;fill-opacity:0.35;stroke:none");
    svg.text({kLeft + 18, legend_y},
             "shaded: the discharge's uncertainty band, about 95 % (docs/uncertainty.md)",
             Anchor::start, kFontSize - 1);
    legend_y += 17;
  }
  svg.end_group();
  draw_caution(svg, kPageHeight - 12);
  return svg.finish();
}

}  // namespace stagewell::plot
