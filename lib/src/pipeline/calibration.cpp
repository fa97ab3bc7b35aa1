#include "stagewell/calibration.hpp"

#include <fmt/format.h>

#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <utility>  // before Boost (see DEVELOPERS.md)

#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

// 100 (Qm − Qc) / Qc, root mean square over the points, Qc divided by `factor`.
double rms_difference_percent(std::span<const CalibrationPoint> points, double factor) {
  double sum = 0.0;
  for (const auto& p : points) {
    const double computed = p.computed / factor;
    const double difference = 100.0 * (p.measured - computed) / computed;
    sum += difference * difference;
  }
  return std::sqrt(sum / static_cast<double>(points.size()));
}

}  // namespace

Result<RoughnessFit> fit_roughness(std::span<const CalibrationPoint> points) {
  if (points.size() < kMinCalibrationPoints) {
    return fail(ErrorKind::invalid_argument,
                fmt::format("{} usable gauging{}: a roughness fit needs at least {}", points.size(),
                            points.size() == 1 ? "" : "s", kMinCalibrationPoints));
  }
  for (const auto& p : points) {
    if (!(std::isfinite(p.measured) && std::isfinite(p.computed) && p.measured > 0.0 &&
          p.computed > 0.0)) {
      return fail(ErrorKind::invalid_argument,
                  "the gauging at " + format_timestamp_utc(p.time_ms) +
                      " has a measured or computed discharge that is not a positive number");
    }
  }
  const double count = static_cast<double>(points.size());
  // Two passes (mean, then squared deviations): no cancellation for log ratios close together.
  double sum = 0.0;
  for (const auto& p : points) sum += std::log(p.computed / p.measured);
  const double mean = sum / count;
  double squares = 0.0;
  for (const auto& p : points) {
    const double deviation = std::log(p.computed / p.measured) - mean;
    squares += deviation * deviation;
  }
  const double deviation = std::sqrt(squares / (count - 1.0));
  const boost::math::students_t distribution(count - 1.0);
  const double t = boost::math::quantile(distribution, 0.975);
  const double half_width = t * deviation / std::sqrt(count);

  RoughnessFit fit;
  fit.count = points.size();
  fit.factor = std::exp(mean);
  fit.factor_low = std::exp(mean - half_width);
  fit.factor_high = std::exp(mean + half_width);
  fit.rms_difference_percent_before = rms_difference_percent(points, 1.0);
  fit.rms_difference_percent_after = rms_difference_percent(points, fit.factor);
  return fit;
}

std::string roughness_change_yaml(std::int64_t from_ms, std::span<const double> scaled_roughness) {
  std::string values;
  for (double n : scaled_roughness) {
    if (!values.empty()) values += ", ";
    values += fmt::format("{:.4g}", n);
  }
  if (scaled_roughness.size() != 1) values = "[" + values + "]";
  return fmt::format("      - from: {}\n        roughness: {}\n", format_timestamp_utc(from_ms),
                     values);
}

}  // namespace stagewell
