// Calibration of Manning's roughness against gaugings: the one factor f by which every
// subsection's n is scaled so that the computed discharges best match the measured ones.
//
// Since Manning's discharge is proportional to 1/n when every n is scaled alike, scaling by f turns
// each computed discharge Qc into Qc / f. f minimises the sum over the gaugings of
// (ln Qm − ln(Qc / f))², whose solution is ln f = mean of ln(Qc / Qm) (the geometric mean of the
// gaugings' own factors). Its 95 % interval is Student's t interval on that mean:
// ln f ± t(0.975, N − 1) · s / √N, s the sample standard deviation of ln(Qc / Qm).
//
// Pure functions: no store, no configuration file.
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell {

// One usable gauging: both discharges in the same unit, both > 0.
struct CalibrationPoint {
  std::int64_t time_ms = 0;
  double measured = 0.0;
  double computed = 0.0;
};

struct RoughnessFit {
  std::size_t count = 0;
  double factor = 1.0;      // f: multiply every n by it
  double factor_low = 1.0;  // 95 % interval of f
  double factor_high = 1.0;
  // Root mean square of 100 (Qm − Qc) / Qc over the points, percent, with Qc as computed
  // (before) and scaled by 1 / f (after).
  double rms_difference_percent_before = 0.0;
  double rms_difference_percent_after = 0.0;
};

// The fewest gaugings a fit takes: with two, the interval has one degree of freedom and is too wide
// to use (t = 12.7); three is a floor, not a recommendation.
inline constexpr std::size_t kMinCalibrationPoints = 3;

// Fits f. Fails (invalid_argument) with fewer than kMinCalibrationPoints points or a point whose
// discharges are not both finite and > 0.
Result<RoughnessFit> fit_roughness(std::span<const CalibrationPoint> points);

// A YAML `changes:` entry, ready to paste under a site's `changes:`, that sets every subsection's n
// (scaled by the fit's factor, rounded to 4 significant digits) from `from_ms` on. Lines are
// indented for a site's `changes:` list in config/reference.yaml's layout.
std::string roughness_change_yaml(std::int64_t from_ms, std::span<const double> scaled_roughness);

}  // namespace stagewell
