// The depths at which a channel's uniform flow is supercritical (Froude number above 1), found once
// per site so that the ingest path flags `supercritical` with a look-up instead of the geometry.
#pragma once

#include <utility>
#include <vector>

#include "stagewell/channel.hpp"

namespace stagewell {

class SupercriticalDepths {
 public:
  // Scans (0, max_depth] at `samples` depths (plus every geometric breakpoint) for sign changes of
  // Fr - 1 and refines each crossing by bisection to ~1e-12 of max_depth.
  SupercriticalDepths(const Channel& channel, double max_depth, int samples = 2000);

  bool contains(double depth) const;
  const std::vector<std::pair<double, double>>& ranges() const { return ranges_; }

 private:
  std::vector<std::pair<double, double>> ranges_;  // [from, to) depths, sorted, disjoint
};

}  // namespace stagewell
