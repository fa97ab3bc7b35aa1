// How far a computed discharge can be trusted, and how far the steady-flow assumption moves it.
//
// The band: first-order propagation of the standard uncertainties of the inputs of Manning's
// equation (JCGM 100:2008, "Evaluation of measurement data — Guide to the expression of
// uncertainty in measurement" (the GUM), clause 5.1.2, uncorrelated inputs). With Q ∝ (1/n) S^(1/2)
// f(h), the sensitivity coefficients relative to Q are -1 for n, 1/2 for S and (dQ/dh)/Q for the
// depth, so the relative combined standard uncertainty is
//
//   u_c² = u_n² + (u_S / 2)² + (u_h · (dQ/dh) / Q)²
//
// (u_n, u_S relative; u_h absolute, in length units) and the band is Q (1 ± k u_c) with coverage
// factor k = 2 (about 95 % for a normal distribution, GUM 6.2 and 6.3). Correlations between the
// inputs and the error of Manning's equation itself are not in it.
//
// The Jones formula (B. E. Jones, 1915; in the form of the standard open-channel texts) estimates
// the discharge of a flood wave from the steady discharge Q at the same stage:
//
//   Q_J = Q √(1 + (dh/dt) / (S c)),  c = (1/T) dQ/dh  (the kinematic wave celerity)
//
// with S the energy slope of steady flow and T the top width: above Q on a rising stage, below it
// on a falling one.
#pragma once

#include <cmath>
#include <cstdint>
#include <optional>

#include "stagewell/channel.hpp"

namespace stagewell {

// A site's standard uncertainties (configuration key `uncertainty:`).
struct UncertaintySpec {
  double roughness = 0.10;  // relative standard uncertainty of Manning's n (0.10 = 10 %)
  double slope = 0.10;      // relative standard uncertainty of the energy slope
  double stage = 0.005;     // standard uncertainty of a stage reading, site's stage units

  friend bool operator==(const UncertaintySpec&, const UncertaintySpec&) = default;
};

inline constexpr double kCoverageFactor = 2.0;  // GUM 6.2: about 95 % for a normal distribution

// The channel at one depth, with the slope of its rating curve.
struct StageResponse {
  double discharge = 0.0;  // L^3/s
  double dq_dh = 0.0;      // L^2/s: dQ/dh by a central difference of Manning's equation
  double top_width = 0.0;  // L
};

// REQUIRES: depth > 0.
StageResponse stage_response(const Channel& channel, double depth);
// Its dQ/dh alone (two evaluations of Manning's equation). REQUIRES: depth > 0.
double rating_slope(const Channel& channel, double depth);

// The relative expanded uncertainty k·u_c of the discharge (a fraction): Q lies within
// Q (1 ± band). `stage_to_length` turns the stage uncertainty (stage units) into the channel's
// length unit. Empty where Q is not positive and finite.
std::optional<double> relative_band(const StageResponse& at, const UncertaintySpec& spec,
                                    double stage_to_length);

// Q_J for a stage changing at `dh_dt` (L/s) across a channel of energy slope `slope`. Empty where
// it cannot be formed: no discharge or no free surface (T = 0, a full conduit), a rating that does
// not rise with stage (dQ/dh <= 0), or a root of a number that is not positive.
std::optional<double> jones_discharge(const StageResponse& at, double slope, double dh_dt);

// Both figures are kept to a whole number of basis points (1 bp = 0.01 % of the discharge), far
// finer than either is known to, so that the store keeps each in 1 to 3 bytes: the band as its
// half-width, the Jones estimate as its difference from the discharge. SiteHistory::compute()
// rounds them so, and the store writes and reads the same numbers back bit for bit (a division
// of a whole number by 10000.0, the same in C++ and in SQLite's views).
inline std::int64_t band_to_bp(double band) { return std::llround(band * 10000.0); }
inline double band_from_bp(std::int64_t bp) { return static_cast<double>(bp) / 10000.0; }
// REQUIRES: discharge > 0.
inline std::int64_t jones_to_bp(double discharge, double jones) {
  return std::llround((jones / discharge - 1.0) * 10000.0);
}
inline double jones_from_bp(double discharge, std::int64_t bp) {
  return discharge * (1.0 + static_cast<double>(bp) / 10000.0);
}

// The ends of a stored discharge's band: Q (1 - band), never below 0, and Q (1 + band). Without a
// band (a discharge of 0, or stored before bands existed) both are the discharge itself; without
// a discharge, empty.
std::optional<double> band_low(std::optional<double> discharge, std::optional<double> band);
std::optional<double> band_high(std::optional<double> discharge, std::optional<double> band);

}  // namespace stagewell
