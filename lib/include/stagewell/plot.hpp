// Pictures for people, as SVG text: a hydrograph (discharge and stage over a period) and a
// flow-duration curve. Drawn for reading on paper: black axes labelled with their units, thick
// enough lines, and flagged readings told apart by shape as well as colour.
//
// Hydrograph: discharge (top panel) and stage (bottom panel) against local time. The line breaks
// where readings are more than max_gap apart and, for discharge, at readings without one
// (out_of_range): a gap is drawn as a gap. Flagged readings are marked by how the daily figures
// treat them (DailySpec): a cross for "left out, time missing", a triangle for "left out, bridged",
// a circle for "flagged, used"; the legend names the flags of each. A period with more readings
// than the plot has pixels is drawn as each pixel column's lowest and highest value, so no peak
// is lost.
//
// Flow-duration curve: daily mean discharge on a logarithmic axis against the share of days it
// was equalled or exceeded (statistics.hpp). Days with zero flow cannot be shown on a log axis;
// the picture says how many were left out.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "stagewell/daily.hpp"
#include "stagewell/readings_table.hpp"
#include "stagewell/statistics.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::plot {

// PlotReading, a stored reading as the hydrograph needs it, is the store's (readings_table.hpp):
// ReadingsTable::plot_readings reads them.

struct HydrographSpec {
  std::string title;   // e.g. "raceway-a (Hatchery raceway A outlet)"
  std::string period;  // e.g. "2026-03-01 to 2026-03-31"
  std::int64_t from_ms = 0;
  std::int64_t to_ms = 0;
  TimeZone zone = TimeZone::utc();  // of the time axis
  std::int64_t max_gap_ms = 3'600'000;
  Flags excluded;  // how the daily figures treat flags (for the markers)
  Flags bridged;
  stats::Conversion units;   // discharge shown = stored * units.flow_factor
  std::string stage_symbol;  // "m", "cm", "ft"...
};

// REQUIRES: from_ms < to_ms; readings in time order.
std::string hydrograph_svg(const std::vector<PlotReading>& readings, const HydrographSpec& spec);

struct DurationSpec {
  std::string title;
  std::string period;  // "2025-10-01 to 2026-09-30"
  stats::Conversion units;
};

std::string duration_svg(const stats::FlowDuration& duration, const DurationSpec& spec);

}  // namespace stagewell::plot

namespace stagewell::plot {

// Rating plot: stage (vertical) against discharge (horizontal) of one configuration version, with
// its uncertainty band as a shaded area when given, the gaugings as points, and under it a small
// panel of the gaugings' differences from the computed discharge (percent) against their measured
// discharge.
struct RatingCurvePoint {
  double stage = 0.0;               // site's stage units
  double discharge = 0.0;           // stored unit (m^3/s or ft^3/s)
  std::optional<double> low, high;  // the band's ends, stored unit; both or neither
};
struct RatingGauging {
  double stage = 0.0;                        // site's stage units
  double measured = 0.0;                     // stored unit
  std::optional<double> difference_percent;  // 100 (measured - computed) / computed
};
struct RatingSpec {
  std::string title;
  std::string subtitle;      // which version, which gaugings
  std::string band_note;     // what the shaded area is; empty when there is none
  stats::Conversion units;   // discharge shown = stored * units.flow_factor
  std::string stage_symbol;  // "m", "cm", "ft"...
};

// REQUIRES: curve in increasing stage, at least 2 points.
std::string rating_svg(const std::vector<RatingCurvePoint>& curve,
                       const std::vector<RatingGauging>& gaugings, const RatingSpec& spec);

}  // namespace stagewell::plot
