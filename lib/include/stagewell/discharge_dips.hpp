// Where a channel's discharge falls as its depth rises, and where to divide a surveyed section so
// that it does not.
//
// Computed as one section, a surveyed channel whose water spills onto a wide, nearly level
// overbank gains wetted perimeter much faster than area: A R^(2/3) drops, and Manning's equation
// gives less discharge at a higher stage (by most of it, for a flat overbank). That is what the
// equation says for one section, but not what the river does: the overbank flow is slow and
// shallow while the main channel keeps its own. Dividing the section at the bank tops (breaks,
// computed by the divided-channel method) is the usual remedy (common practice).
//
// Depths are in the channel's length unit (m or ft), discharges in its unit (m^3/s or ft^3/s).
// Free functions of immutable inputs: safe to call from any thread.
#pragma once

#include <optional>
#include <vector>

#include "stagewell/channel.hpp"
#include "stagewell/section.hpp"

namespace stagewell {

// One stretch of depth over which discharge falls as depth rises.
struct DischargeDip {
  double from_depth = 0.0;      // L: where discharge peaks before falling
  double to_depth = 0.0;        // L: where it is lowest, before it rises again (or the top)
  double from_discharge = 0.0;  // L^3/s, at from_depth
  double to_discharge = 0.0;    // L^3/s, at to_depth
  // L: the lowest depth above to_depth at which discharge is back to from_discharge; nullopt
  // when it is not, up to the top of the section.
  std::optional<double> recovered_depth;

  double loss_fraction() const { return 1.0 - to_discharge / from_discharge; }
};

// Every stretch of depth in (0, top_depth()] over which `channel`'s discharge falls by at least
// `min_loss_fraction` of its peak, lowest first. Discharge is computed (Manning's equation,
// Channel::discharge) at `steps` equal steps of depth and at each of the section's breakpoints;
// the depths reported are those of the scan, so they are within top_depth() / steps of the true
// peak and trough (exact where the peak is at a surveyed elevation, as at a level overbank).
// Closed conduits are not scanned (an empty result): a pipe's discharge peaks below its crown by
// its shape, which dividing it would not change.
// REQUIRES: steps >= 2, 0 < min_loss_fraction < 1.
std::vector<DischargeDip> discharge_dips(const Channel& channel, double min_loss_fraction = 0.001,
                                         int steps = 20000);

// A surveyed point at the top of a bank of the main channel.
struct BankTop {
  double station = 0.0;    // L, as surveyed
  double elevation = 0.0;  // L, as surveyed
  // True when the water level at the start of the dip reaches this point (to within a
  // millionth of the section's depth), so that the water spills over it as it rises further.
  bool overtopped = false;
};

// The banks of the main channel when the water stands `depth` above the section's lowest
// point: from the lowest surveyed point, the first point on each side whose ground is at or
// above the water. nullopt on a side where that point is the section's end (no overbank
// there, and a break cannot sit on an end). For Shape::surveyed only; REQUIRES: `spec` valid.
struct MainChannelBanks {
  std::optional<BankTop> left;
  std::optional<BankTop> right;
};
MainChannelBanks main_channel_banks(const SectionSpec& spec, double depth);

}  // namespace stagewell
