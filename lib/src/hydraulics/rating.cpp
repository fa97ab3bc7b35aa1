// Building and reading a rating table (see rating.hpp for what it promises).
#include "stagewell/rating.hpp"

#include <algorithm>
#include <cmath>
#include <utility>

namespace stagewell {
namespace {

constexpr double kMinDepthFraction = 1e-6;      // of top_depth(): bottom of the table
constexpr int kUniformIntervals = 32;           // starting knots besides the breakpoints
constexpr double kFitTolerance = 2e-5;          // relative, at the test depths of each interval
constexpr int kTestDepths = 12;                 // per interval, at t = (j + 1/2) / 12
constexpr double kMinWidthFraction = 1e-13;     // of top_depth(): intervals are never halved below
constexpr std::size_t kMaxIntervals = 1 << 16;  // bounds the build; never reached in practice

// A cubic in t in [0, 1]: c0 + t (c1 + t (c2 + t c3)).
struct Cubic {
  double c0, c1, c2, c3;
  double operator()(double t) const { return c0 + t * (c1 + t * (c2 + t * c3)); }
};

struct Interval {
  double end;  // L; the interval starts where the one before it ends
  Cubic cubic;
};

// The Hermite cubic through the discharges at t = 0, 1/3, 2/3, 1. Its end slopes are those of the
// interpolating cubic (so where the limiter leaves them alone it is that cubic, accurate to the
// fourth power of the width); the Fritsch-Carlson limiter then makes it monotone whenever f0 and
// f3 are ordered: slopes against the trend become 0, and slopes too steep for the rise are
// scaled into the circle alpha^2 + beta^2 <= 9.
Cubic fit(double f0, double f1, double f2, double f3) {
  double slope0 = (-11.0 * f0 + 18.0 * f1 - 9.0 * f2 + 2.0 * f3) / 2.0;  // df/dt at t = 0
  double slope1 = (-2.0 * f0 + 9.0 * f1 - 18.0 * f2 + 11.0 * f3) / 2.0;  // df/dt at t = 1
  const double rise = f3 - f0;
  if (rise == 0.0) {
    slope0 = slope1 = 0.0;
  } else {
    double alpha = std::max(0.0, slope0 / rise);
    double beta = std::max(0.0, slope1 / rise);
    const double radius_squared = alpha * alpha + beta * beta;
    if (radius_squared > 9.0) {
      const double scale = 3.0 / std::sqrt(radius_squared);
      alpha *= scale;
      beta *= scale;
    }
    slope0 = alpha * rise;
    slope1 = beta * rise;
  }
  return Cubic{f0, slope0, 3.0 * rise - 2.0 * slope0 - slope1, slope0 + slope1 - 2.0 * rise};
}

// The discharge an interval starting at `depth` starts from. Where a level bench floods at
// `depth` the discharge jumps down just above it (its length joins the wetted perimeter) and the
// interval must start from the lower value. A step of 1e-12 relative shows the jump; where there
// is none the two values differ by about that much, and the exact one is kept.
double discharge_just_above(const Channel& channel, double depth) {
  const double at = channel.discharge(depth);
  const double above = channel.discharge(depth * (1.0 + 1e-12));
  return std::abs(above - at) > 1e-8 * at ? above : at;
}

// The starting knots: the bottom of the table, every breakpoint, and an even spread so that no
// interval starts wider than 1/32 of the range. An even knot within rounding of a breakpoint
// gives way to it.
std::vector<double> starting_knots(const Section& section, double min_depth, double top) {
  std::vector<double> breakpoints{min_depth};
  for (const double depth : section.breakpoints()) {
    if (depth > min_depth && depth < top) breakpoints.push_back(depth);
  }
  breakpoints.push_back(top);
  std::vector<double> knots = breakpoints;
  for (int i = 1; i < kUniformIntervals; ++i) {
    const double depth = top * i / kUniformIntervals;
    const auto next = std::lower_bound(breakpoints.begin(), breakpoints.end(), depth);
    const bool near_next = next != breakpoints.end() && *next - depth <= 1e-9 * top;
    const bool near_previous = next != breakpoints.begin() && depth - *(next - 1) <= 1e-9 * top;
    if (depth > min_depth && !near_next && !near_previous) knots.push_back(depth);
  }
  std::sort(knots.begin(), knots.end());
  return knots;
}

// Fits intervals, halving each until its cubic passes the check against the direct formula.
class Builder {
 public:
  Builder(const Channel& channel, double top)
      : channel_(channel), min_width_(kMinWidthFraction * top) {}

  // Adds the cubics covering (start, end]. `start_discharge` is the discharge just above `start`
  // (not at it, where a bench floods), `end_discharge` the discharge at `end`.
  void add(double start, double end, double start_discharge, double end_discharge) {
    const double width = end - start;
    const Cubic cubic = fit(start_discharge, channel_.discharge(start + width / 3.0),
                            channel_.discharge(start + 2.0 * width / 3.0), end_discharge);
    if (width <= min_width_ || intervals_.size() >= kMaxIntervals || passes(start, end, cubic)) {
      intervals_.push_back({end, cubic});
      return;
    }
    const double middle = start + width / 2.0;
    const double middle_discharge = channel_.discharge(middle);
    add(start, middle, start_discharge, middle_discharge);
    add(middle, end, middle_discharge, end_discharge);
  }

  std::vector<Interval> take() { return std::move(intervals_); }

 private:
  bool passes(double start, double end, const Cubic& cubic) const {
    for (int j = 0; j < kTestDepths; ++j) {
      const double t = (j + 0.5) / kTestDepths;
      const double exact = channel_.discharge(start + t * (end - start));
      if (!(std::abs(cubic(t) - exact) <= kFitTolerance * std::abs(exact))) return false;
    }
    return true;
  }

  const Channel& channel_;
  double min_width_;
  std::vector<Interval> intervals_;
};

}  // namespace

RatingTable::RatingTable(std::shared_ptr<const Channel> channel) : channel_(std::move(channel)) {
  const Channel& c = *channel_;
  valid_depth_ = c.section().top_depth();
  min_depth_ = kMinDepthFraction * valid_depth_;
  const std::vector<double> knots = starting_knots(c.section(), min_depth_, valid_depth_);

  Builder builder(c, valid_depth_);
  for (std::size_t i = 0; i + 1 < knots.size(); ++i) {
    builder.add(knots[i], knots[i + 1], discharge_just_above(c, knots[i]),
                c.discharge(knots[i + 1]));
  }

  depths_.push_back(min_depth_);
  for (const Interval& interval : builder.take()) {
    const double start = depths_.back();
    depths_.push_back(interval.end);
    const auto& [c0, c1, c2, c3] = interval.cubic;
    pieces_.push_back({1.0 / (interval.end - start), c0, c1, c2, c3});
  }
}

double RatingTable::discharge(double depth) const {
  if (!(depth > min_depth_ && depth <= valid_depth_)) return channel_->discharge(depth);
  // The first knot at or above `depth` among depths_[1..]: a binary search without branches
  // (the comparison becomes a conditional move), so that scattered depths do not stall it.
  const double* base = depths_.data() + 1;
  std::size_t length = depths_.size() - 1;
  while (length > 1) {
    const std::size_t half = length / 2;
    base = base[half] < depth ? base + half : base;
    length -= half;
  }
  const std::size_t piece =
      static_cast<std::size_t>(base - (depths_.data() + 1)) + (*base < depth ? 1 : 0);
  const Piece& p = pieces_[piece];
  const double t = (depth - depths_[piece]) * p.inverse_width;
  return p.c0 + t * (p.c1 + t * (p.c2 + t * p.c3));
}

}  // namespace stagewell
