// The band and the Jones estimate: the formulas are in uncertainty.hpp.
#include "stagewell/uncertainty.hpp"

#include <algorithm>
#include <cmath>

namespace stagewell {

double rating_slope(const Channel& channel, double depth) {
  // A central difference with a step of 1e-6 of the depth: a truncation error near 1e-12 of
  // dQ/dh and a rounding error near 1e-10 of it (away from a kink of the section). The rating
  // table's cubics are not used: their slopes are off by up to some percent near a pipe's crown.
  const double step = 1e-6 * depth;
  const double low = depth - step;
  const double high = depth + step;
  return (channel.discharge(high) - channel.discharge(low)) / (high - low);
}

StageResponse stage_response(const Channel& channel, double depth) {
  StageResponse out;
  out.discharge = channel.discharge(depth);
  out.top_width = channel.section().geometry(depth).top_width;
  out.dq_dh = rating_slope(channel, depth);
  return out;
}

std::optional<double> relative_band(const StageResponse& at, const UncertaintySpec& spec,
                                    double stage_to_length) {
  if (!(at.discharge > 0.0) || !std::isfinite(at.discharge)) return std::nullopt;
  const double stage_term = spec.stage * stage_to_length * at.dq_dh / at.discharge;
  const double slope_term = spec.slope / 2.0;
  const double combined = std::sqrt(spec.roughness * spec.roughness + slope_term * slope_term +
                                    stage_term * stage_term);
  if (!std::isfinite(combined)) return std::nullopt;
  return kCoverageFactor * combined;
}

std::optional<double> jones_discharge(const StageResponse& at, double slope, double dh_dt) {
  if (!(at.discharge > 0.0) || !(at.top_width > 0.0) || !(at.dq_dh > 0.0) || !(slope > 0.0)) {
    return std::nullopt;
  }
  const double celerity = at.dq_dh / at.top_width;  // L/s
  const double argument = 1.0 + dh_dt / (slope * celerity);
  if (!(argument > 0.0) || !std::isfinite(argument)) return std::nullopt;
  return at.discharge * std::sqrt(argument);
}

std::optional<double> band_low(std::optional<double> discharge, std::optional<double> band) {
  if (!discharge || !band) return discharge;
  return std::max(0.0, *discharge * (1.0 - *band));
}

std::optional<double> band_high(std::optional<double> discharge, std::optional<double> band) {
  if (!discharge || !band) return discharge;
  return *discharge * (1.0 + *band);
}

}  // namespace stagewell
