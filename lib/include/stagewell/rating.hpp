// A precomputed depth -> discharge table for one channel, built once at start-up so that the
// ingest path converts each reading with a table look-up instead of the geometry.
//
// Interpolation is shape-preserving (monotone between knots wherever the tabulated discharges are)
// and stays within 0.05 % of Channel::discharge() over the valid range (0, top_depth]: knots are
// placed at every geometric breakpoint and refined until the check against the direct formula
// passes. Above the valid range, look-ups fall back to the direct formula.
//
// Immutable after construction; safe to share between threads.
#pragma once

#include <memory>
#include <vector>

#include "stagewell/channel.hpp"

namespace stagewell {

class RatingTable {
 public:
  explicit RatingTable(std::shared_ptr<const Channel> channel);

  // Discharge (L^3/s) at depth (L). 0 for depth <= 0.
  double discharge(double depth) const;

  double valid_depth() const { return valid_depth_; }  // top of the tabulated range, L
  std::size_t knot_count() const { return depths_.size(); }
  const Channel& channel() const { return *channel_; }

 private:
  std::shared_ptr<const Channel> channel_;
  double valid_depth_ = 0.0;
  std::vector<double> depths_;
  std::vector<double> discharges_;
  std::vector<double> slopes_;  // dQ/dy at each knot for cubic Hermite interpolation
};

}  // namespace stagewell
