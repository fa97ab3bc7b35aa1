// A channel: a section with its roughness and energy slope, in one unit system. It computes the
// hydraulic state at a depth by Manning's equation, and inverts it for normal and critical depth.
//
//   Q = (k/n) A R^(2/3) S^(1/2),  k = 1 (metric) or (1/0.3048)^(1/3) (US customary)
//   Fr = V / sqrt(g A/T),         g = 9.80665 m/s^2 (or 9.80665/0.3048 ft/s^2)
//
// A surveyed section with breaks is computed by the divided-channel method: each subsection has
// its own n, the discharge is the sum of subsection discharges (conveyances); velocity, hydraulic
// radius, hydraulic depth and Froude number are of the whole section (totals of A, P, T).
//
// Immutable after construction; safe to share between threads.
#pragma once

#include <memory>
#include <vector>

#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/section.hpp"
#include "stagewell/units.hpp"

namespace stagewell {

// Everything the core computes at one depth, in the channel's unit system.
struct HydraulicState {
  double depth = 0.0;             // L
  double area = 0.0;              // L^2
  double wetted_perimeter = 0.0;  // L
  double hydraulic_radius = 0.0;  // L: A/P, 0 when dry
  double top_width = 0.0;         // L
  double hydraulic_depth = 0.0;   // L: A/T; +inf when T = 0 with water (a full conduit)
  double velocity = 0.0;          // L/s: Q/A, 0 when dry
  double discharge = 0.0;         // L^3/s
  double froude = 0.0;            // V/sqrt(g A/T); 0 when dry; NaN when T = 0 with water (a full
                                  // conduit has no free surface, so no Froude number)
  // below_zero_flow  depth <= 0 (or NaN): every other field is 0 and `depth` is as given.
  // above_section    an open section deeper than its top (the walls are taken to continue
  //                  vertically); never set for a closed conduit.
  // surcharged       a closed conduit deeper than its crown. The pressure gradient of a surcharged
  //                  conduit is unknown, so the figures are those of the conduit flowing full at
  //                  the channel's slope.
  // supercritical    Froude number above 1.
  Flags flags;
};

class Channel {
 public:
  // REQUIRES: roughness.size() == section->subsection_count(), every n > 0, slope > 0.
  Channel(std::shared_ptr<const Section> section, std::vector<double> roughness, double slope,
          units::System system);

  const Section& section() const { return *section_; }
  const std::vector<double>& roughness() const { return roughness_; }
  double slope() const { return slope_; }
  units::System system() const { return system_; }

  HydraulicState at_depth(double depth) const;
  // The same as at_depth(depth).discharge, faster: no allocation, geometry and Manning only.
  double discharge(double depth) const;

  // The most this channel carries in open-channel flow: for a closed conduit the peak below the
  // crown (a circular pipe peaks near 0.938 D at about 1.076 times its full discharge); +infinity
  // for an open section, whose walls are taken to continue upwards.
  double max_open_discharge() const { return max_open_discharge_; }

  // Normal depth: the depth at which uniform flow carries `discharge` (L^3/s). Where more than one
  // depth carries it, the lowest: a circular pipe carries discharges between its full and its
  // peak discharge at two depths, below and above the peak, and the lower one is returned; a
  // surveyed section whose discharge dips as a level bench floods likewise. Open sections may give
  // a depth above top_depth() (vertical walls above the top). 0 for a discharge of 0.
  // Errors: a negative or non-finite discharge (invalid_argument); more than max_open_discharge()
  // (impossible). Bisection on a bracket, at most 200 steps, to about 1e-14 relative.
  Result<double> normal_depth(double discharge) const;

  // Critical depth for `discharge`: where Q^2 T / (g A^3) = 1; the lowest such depth (a compound
  // section can have several). A closed conduit always has one below its crown, where T -> 0.
  // 0 for a discharge of 0. Errors: a negative or non-finite discharge (invalid_argument).
  Result<double> critical_depth(double discharge) const;

 private:
  std::shared_ptr<const Section> section_;
  std::vector<double> roughness_;
  double slope_;
  units::System system_;
  double k_;
  double gravity_;
  // k S^(1/2) / n of each subsection: discharge per unit A R^(2/3).
  std::vector<double> discharge_factors_;
  double max_open_discharge_;        // L^3/s
  double max_open_discharge_depth_;  // L: where it occurs (top_depth() for open sections)
};

}  // namespace stagewell
