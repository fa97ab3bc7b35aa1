#include "supercritical.hpp"

#include <algorithm>
#include <limits>

namespace stagewell {
namespace {

bool is_supercritical(const Channel& channel, double depth) {
  return channel.at_depth(depth).froude > 1.0;
}

// The depth in (lo, hi] where supercritical-ness changes, knowing it differs at lo and hi.
double crossing(const Channel& channel, double lo, double hi) {
  const bool at_lo = is_supercritical(channel, lo);
  for (int i = 0; i < 200 && hi - lo > 1e-13 * std::max(1.0, hi); ++i) {
    const double mid = 0.5 * (lo + hi);
    (is_supercritical(channel, mid) == at_lo ? lo : hi) = mid;
  }
  return hi;
}

}  // namespace

SupercriticalDepths::SupercriticalDepths(const Channel& channel, double max_depth, int samples) {
  std::vector<double> depths;
  for (int i = 1; i <= samples; ++i) depths.push_back(max_depth * i / samples);
  for (double depth : channel.section().breakpoints()) {
    if (depth > 0.0 && depth <= max_depth) depths.push_back(depth);
  }
  std::sort(depths.begin(), depths.end());
  // Very shallow flow in a smooth steep channel can be supercritical: look close to zero too.
  depths.insert(depths.begin(), max_depth * 1e-6);

  std::optional<double> open_from;
  double previous = depths.front();
  bool previous_state = is_supercritical(channel, previous);
  if (previous_state) open_from = 0.0;
  for (std::size_t i = 1; i < depths.size(); ++i) {
    const double depth = depths[i];
    const bool state = is_supercritical(channel, depth);
    if (state != previous_state) {
      const double at = crossing(channel, previous, depth);
      if (state) {
        open_from = at;
      } else {
        ranges_.emplace_back(*open_from, at);
        open_from.reset();
      }
    }
    previous = depth;
    previous_state = state;
  }
  if (open_from) ranges_.emplace_back(*open_from, std::numeric_limits<double>::infinity());
}

bool SupercriticalDepths::contains(double depth) const {
  for (const auto& [from, to] : ranges_) {
    if (depth >= from && depth < to) return true;
  }
  return false;
}

}  // namespace stagewell
