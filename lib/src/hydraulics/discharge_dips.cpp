// Scanning a channel for depths where its discharge falls, and finding the banks of its main
// channel.
#include "stagewell/discharge_dips.hpp"

#include <algorithm>
#include <cassert>
#include <cstddef>

namespace stagewell {
namespace {

// The smallest depth in (below, above] whose discharge is at least `target`, knowing that
// discharge(below) < target <= discharge(above). Bisection to rounding: discharge is continuous
// from below (section.hpp), so the answer is a depth, not a jump's open end.
double depth_reaching(const Channel& channel, double below, double above, double target) {
  for (int i = 0; i < 200 && above - below > 1e-15 * above; ++i) {
    const double middle = 0.5 * (below + above);
    (channel.discharge(middle) >= target ? above : below) = middle;
  }
  return above;
}

}  // namespace

std::vector<DischargeDip> discharge_dips(const Channel& channel, double min_loss_fraction,
                                         int steps) {
  assert(steps >= 2 && min_loss_fraction > 0.0 && min_loss_fraction < 1.0);
  std::vector<DischargeDip> dips;
  const Section& section = channel.section();
  if (section.closed()) return dips;
  const double top = section.top_depth();

  // The breakpoints are where a level overbank starts to flood: the peak before the fall is
  // exactly at one, so the scan must include them.
  std::vector<double> depths = section.breakpoints();
  for (int i = 1; i <= steps; ++i) depths.push_back(top * i / steps);
  std::sort(depths.begin(), depths.end());
  depths.erase(std::unique(depths.begin(), depths.end()), depths.end());
  std::vector<double> discharges;
  discharges.reserve(depths.size());
  for (const double depth : depths) discharges.push_back(channel.discharge(depth));

  const std::size_t count = depths.size();
  std::size_t i = 0;
  while (i + 1 < count) {
    if (!(discharges[i + 1] < discharges[i])) {
      ++i;
      continue;
    }
    // A fall starts at i (a peak: the step before it did not fall); follow it to its trough.
    const std::size_t peak = i;
    std::size_t trough = i + 1;
    while (trough + 1 < count && discharges[trough + 1] < discharges[trough]) ++trough;
    i = trough;
    const double from_discharge = discharges[peak];
    if (!(from_discharge > 0.0) || 1.0 - discharges[trough] / from_discharge < min_loss_fraction) {
      continue;
    }
    DischargeDip dip{depths[peak], depths[trough], from_discharge, discharges[trough], {}};
    for (std::size_t k = trough + 1; k < count; ++k) {
      if (discharges[k] >= from_discharge) {
        dip.recovered_depth = depth_reaching(channel, depths[k - 1], depths[k], from_discharge);
        break;
      }
    }
    dips.push_back(dip);
  }
  return dips;
}

MainChannelBanks main_channel_banks(const SectionSpec& spec, double depth) {
  assert(spec.shape == Shape::surveyed && spec.points.size() >= 3);
  const auto& points = spec.points;
  const auto lowest = std::min_element(points.begin(), points.end(),
                                       [](auto& a, auto& b) { return a.second < b.second; });
  const double bottom = lowest->second;
  const double top_depth = std::min(points.front().second, points.back().second) - bottom;
  // Elevations are compared as surveyed while the depth came from heights above the lowest
  // point: allow for the rounding of that subtraction.
  const double tolerance = 1e-6 * top_depth;
  const double water = bottom + depth;
  const auto bank = [&](std::size_t index) -> std::optional<BankTop> {
    if (index == 0 || index + 1 >= points.size()) return std::nullopt;
    const auto& [station, elevation] = points[index];
    return BankTop{station, elevation, elevation <= water + tolerance};
  };

  MainChannelBanks banks;
  const std::size_t deepest = static_cast<std::size_t>(lowest - points.begin());
  std::size_t left = deepest;
  while (left > 0 && points[left - 1].second < water - tolerance) --left;
  if (left > 0) banks.left = bank(left - 1);
  std::size_t right = deepest;
  while (right + 1 < points.size() && points[right + 1].second < water - tolerance) ++right;
  if (right + 1 < points.size()) banks.right = bank(right + 1);
  return banks;
}

}  // namespace stagewell
