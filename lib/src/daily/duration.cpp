// The flow-duration curve: Weibull plotting positions and the flows exceeded a given share of the
// time (definitions in statistics.hpp).
#include <algorithm>
#include <cmath>
#include <functional>
#include <numeric>

#include "stagewell/statistics.hpp"

namespace stagewell::stats {

std::vector<std::optional<double>> exceedance_probabilities(
    std::span<const std::optional<double>> flows) {
  std::vector<std::size_t> order;  // indexes of the present flows, largest first
  for (std::size_t i = 0; i < flows.size(); ++i) {
    if (flows[i]) order.push_back(i);
  }
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return *flows[a] > *flows[b]; });
  const double n = static_cast<double>(order.size());
  std::vector<std::optional<double>> out(flows.size());
  for (std::size_t first = 0; first < order.size();) {
    std::size_t last = first;  // the tie runs over ranks first+1 .. last+1
    while (last + 1 < order.size() && *flows[order[last + 1]] == *flows[order[first]]) ++last;
    const double mean_rank = 0.5 * (static_cast<double>(first + 1) + static_cast<double>(last + 1));
    for (std::size_t k = first; k <= last; ++k) out[order[k]] = mean_rank / (n + 1.0);
    first = last + 1;
  }
  return out;
}

std::optional<double> flow_exceeded(std::span<const double> flows, double p) {
  const std::size_t n = flows.size();
  if (n == 0 || !(p >= 0.0 && p <= 1.0)) return std::nullopt;
  std::vector<double> sorted(flows.begin(), flows.end());
  std::sort(sorted.begin(), sorted.end(), std::greater<>());
  // The i-th largest (1-based) sits at p_i = i / (n + 1): position h = p (n + 1).
  const double h = p * static_cast<double>(n + 1);
  if (h < 1.0 || h > static_cast<double>(n)) return std::nullopt;  // beyond the record
  const auto i = static_cast<std::size_t>(std::floor(h));          // 1 <= i <= n
  if (i == n) return sorted[n - 1];
  const double fraction = h - static_cast<double>(i);
  return sorted[i - 1] + fraction * (sorted[i] - sorted[i - 1]);
}

FlowDuration flow_duration(std::span<const DayFigures> days, Day from, Day to) {
  FlowDuration out;
  std::vector<std::optional<double>> flows;
  std::vector<Day> flow_days;
  for (const DayFigures& day : days) {
    if (day.day < from || day.day > to || !day.complete() || !day.mean_discharge) continue;
    flows.push_back(day.mean_discharge);
    flow_days.push_back(day.day);
  }
  out.days_left_out = static_cast<std::int64_t>(to - from) + 1 -
                      static_cast<std::int64_t>(flows.size());
  const auto p = exceedance_probabilities(flows);
  for (std::size_t i = 0; i < flows.size(); ++i) {
    out.curve.push_back({flow_days[i], *flows[i], *p[i]});
  }
  std::stable_sort(out.curve.begin(), out.curve.end(),
                   [](const DurationPoint& a, const DurationPoint& b) {
                     return a.mean_discharge > b.mean_discharge;
                   });
  std::vector<double> values;
  values.reserve(flows.size());
  for (const auto& flow : flows) values.push_back(*flow);
  for (std::size_t k = 0; k < kReportedPercents.size(); ++k) {
    out.exceeded[k] = flow_exceeded(values, kReportedPercents[k] / 100.0);
  }
  return out;
}

Conversion Conversion::make(units::System system, std::optional<units::Flow> flow,
                            std::optional<units::Volume> volume) {
  Conversion c;
  c.flow = flow.value_or(units::default_flow(system));
  c.volume = volume.value_or(units::default_volume(system));
  // Stored values are in the system's own units: m^3/s and m^3, or ft^3/s and ft^3.
  const double stored_m3 = system == units::System::metric ? 1.0 : units::cubic_foot_m3;
  // The stored unit itself converts exactly (factor 1), not through m^3 and back.
  c.flow_factor =
      c.flow == units::default_flow(system) ? 1.0 : stored_m3 / units::to_m3_per_s(c.flow);
  c.volume_factor =
      c.volume == units::default_volume(system) ? 1.0 : stored_m3 / units::to_m3(c.volume);
  return c;
}

std::optional<double> Conversion::flow_of(std::optional<double> stored) const {
  if (!stored) return std::nullopt;
  return *stored * flow_factor;
}

std::optional<double> Conversion::volume_of(std::optional<double> stored) const {
  if (!stored) return std::nullopt;
  return *stored * volume_factor;
}

}  // namespace stagewell::stats
