// Normal and critical depth: the lowest depth at which a function of depth that starts at 0 on a
// dry bed first reaches a given discharge.
//
// Neither function need be monotone. Normal discharge dips where a level bench floods (its whole
// length joins the wetted perimeter at once) and past the peak of a circular pipe; the critical
// discharge A sqrt(gA/T) can dip where a bench widens the surface. So the search walks up from the
// bed over every breakpoint of the section, each interval cut into a few pieces, and takes the
// first step at which the function reaches the target; it then bisects inside that step. The
// functions only ever jump downwards (at a bench), so the step holds a crossing.
#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <optional>
#include <vector>

#include "stagewell/channel.hpp"

namespace stagewell {
namespace {

constexpr int kPiecesPerInterval = 4;  // samples between breakpoints
constexpr int kMaxDoublings = 64;      // above an open section's top: up to 2^64 x its depth
constexpr int kMaxBisections = 200;
constexpr double kRelativeTolerance = 1e-14;

struct Bracket {
  double low;   // function below the target here
  double high;  // function at or above the target here
};

// Walks up from the bed to `ceiling` over the section's breakpoints, then, if `above_ceiling`,
// doubles the depth until the function reaches `target`.
template <typename Function>
std::optional<Bracket> first_bracket(const Section& section, const Function& function,
                                     double target, double ceiling, bool above_ceiling) {
  double low = 0.0;
  auto reaches = [&](double depth) { return function(depth) >= target; };
  std::vector<double> stops = section.breakpoints();
  std::erase_if(stops, [&](double depth) { return depth >= ceiling; });
  stops.push_back(ceiling);
  for (const double stop : stops) {
    const double start = low;
    for (int piece = 1; piece <= kPiecesPerInterval; ++piece) {
      const double depth =
          piece == kPiecesPerInterval ? stop : start + (stop - start) * piece / kPiecesPerInterval;
      if (reaches(depth)) return Bracket{low, depth};
      low = depth;
    }
  }
  if (!above_ceiling) return std::nullopt;
  double high = 2.0 * ceiling;
  for (int i = 0; i < kMaxDoublings; ++i, high *= 2.0) {
    if (reaches(high)) return Bracket{low, high};
    low = high;
  }
  return std::nullopt;
}

template <typename Function>
double bisect(const Function& function, double target, Bracket bracket) {
  for (int i = 0; i < kMaxBisections; ++i) {
    if (bracket.high - bracket.low <= kRelativeTolerance * bracket.high) break;
    const double middle = 0.5 * (bracket.low + bracket.high);
    if (middle <= bracket.low || middle >= bracket.high) break;  // no double in between
    (function(middle) >= target ? bracket.high : bracket.low) = middle;
  }
  return 0.5 * (bracket.low + bracket.high);
}

std::optional<Error> check_discharge(double discharge) {
  if (std::isfinite(discharge) && discharge >= 0.0) return std::nullopt;
  return Error{ErrorKind::invalid_argument,
               fmt::format("The discharge {} is not a finite number of 0 or more.", discharge)};
}

}  // namespace

Result<double> Channel::normal_depth(double discharge) const {
  if (auto error = check_discharge(discharge)) return std::unexpected(*error);
  if (discharge == 0.0) return 0.0;
  if (discharge > max_open_discharge_) {
    return fail(ErrorKind::impossible,
                fmt::format("A discharge of {:.6g} is more than this conduit carries flowing "
                            "partly full ({:.6g} at most).",
                            discharge, max_open_discharge_));
  }
  const auto function = [this](double depth) { return this->discharge(depth); };
  const bool closed = section_->closed();
  const double ceiling = closed ? max_open_discharge_depth_ : section_->top_depth();
  const auto bracket = first_bracket(*section_, function, discharge, ceiling, !closed);
  if (!bracket) {
    // Only a target within rounding of a closed conduit's peak, or beyond 2^64 x the depth of
    // an open section, gets here.
    if (closed) return max_open_discharge_depth_;
    return fail(ErrorKind::impossible,
                fmt::format("No depth of this channel carries a discharge of {:.6g}.", discharge));
  }
  return bisect(function, discharge, *bracket);
}

Result<double> Channel::critical_depth(double discharge) const {
  if (auto error = check_discharge(discharge)) return std::unexpected(*error);
  if (discharge == 0.0) return 0.0;
  // The discharge that is critical at a depth: Q = A sqrt(g A / T). Infinite where the surface
  // closes (T = 0 at a conduit's crown), so a closed conduit always brackets below its crown.
  const double g = gravity_;
  const auto function = [this, g](double depth) {
    const Geometry geometry = section_->geometry(depth);
    if (!(geometry.area > 0.0)) return 0.0;
    if (!(geometry.top_width > 0.0)) return std::numeric_limits<double>::infinity();
    return geometry.area * std::sqrt(g * geometry.area / geometry.top_width);
  };
  const bool closed = section_->closed();
  const auto bracket =
      first_bracket(*section_, function, discharge, section_->top_depth(), !closed);
  if (!bracket) {
    return fail(
        ErrorKind::impossible,
        fmt::format("No depth of this channel is critical for a discharge of {:.6g}.", discharge));
  }
  return bisect(function, discharge, *bracket);
}

}  // namespace stagewell
