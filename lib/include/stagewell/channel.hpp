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
  double froude = 0.0;            // V/sqrt(g A/T); 0 when dry or T = 0
  Flags flags;                    // below_zero_flow, above_section, surcharged, supercritical
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
  double discharge(double depth) const;  // the same as at_depth(depth).discharge, faster

  // Normal depth: the depth at which uniform flow carries `discharge` (L^3/s).
  // Errors: a negative or non-finite discharge (invalid_argument); more than a closed conduit can
  // carry in open-channel flow (impossible). Bracketed root finding with a bounded iteration count.
  Result<double> normal_depth(double discharge) const;

  // Critical depth for `discharge`: where Q^2 T / (g A^3) = 1. Same errors as normal_depth.
  Result<double> critical_depth(double discharge) const;

 private:
  std::shared_ptr<const Section> section_;
  std::vector<double> roughness_;
  double slope_;
  units::System system_;
  double k_;
  double gravity_;
};

}  // namespace stagewell
