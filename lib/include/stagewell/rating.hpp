// A precomputed depth -> discharge table for one channel, built once at start-up so that the
// ingest path converts each reading with a table look-up instead of the geometry.
//
// Each interval between knots holds its own cubic, fitted through the direct formula's discharge
// at its ends and at its thirds, then limited (Fritsch-Carlson) so that it is monotone wherever
// the discharges at its two ends are ordered. Knots sit at every breakpoint of the section
// (a level bench makes the discharge jump there, and the cubics on each side keep their own
// side's value), and intervals are halved until the cubic stays within 0.002 % of
// Channel::discharge() at 12 test depths inside each: within 0.01 % everywhere in the
// tabulated range (the tests sample it densely).
//
// The tabulated range is (min_depth, valid_depth] with valid_depth = top_depth() and
// min_depth = 1e-6 x top_depth(). Below min_depth the discharge behaves like a power of the depth
// that a cubic cannot follow in relative terms, and above the top the section is outside its
// description; both fall back to the direct formula, so a look-up is never less accurate than
// Channel::discharge() anywhere, only slower there (depth <= 0 still gives 0 at once).
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

  // Discharge (L^3/s) at depth (L). 0 for depth <= 0 (or NaN).
  double discharge(double depth) const;

  double valid_depth() const { return valid_depth_; }  // top of the tabulated range, L
  double min_depth() const { return min_depth_; }      // bottom of the tabulated range, L
  std::size_t knot_count() const { return depths_.size(); }
  const Channel& channel() const { return *channel_; }

 private:
  // The cubic of one interval, in t = (depth - start) / width in [0, 1].
  struct Piece {
    double inverse_width;   // 1/L
    double c0, c1, c2, c3;  // discharge = c0 + t (c1 + t (c2 + t c3)), L^3/s
  };

  std::shared_ptr<const Channel> channel_;
  double valid_depth_ = 0.0;
  double min_depth_ = 0.0;
  std::vector<double> depths_;  // knots, increasing: min_depth_ ... valid_depth_
  std::vector<Piece> pieces_;   // pieces_[i] covers (depths_[i], depths_[i + 1]]
};

}  // namespace stagewell
