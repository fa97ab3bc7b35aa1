// Manning's equation over a section, subsection by subsection (divided-channel method).
#include "stagewell/channel.hpp"

#include <array>
#include <cassert>
#include <cmath>
#include <limits>
#include <span>

namespace stagewell {
namespace {

// A R^(2/3) of one subsection: the conveyance without k/n. cbrt(R^2) is exact to rounding and
// cheaper than pow(R, 2/3).
double area_times_radius_power(const Geometry& g) {
  if (!(g.area > 0.0) || !(g.wetted_perimeter > 0.0)) return 0.0;
  const double radius = g.area / g.wetted_perimeter;
  return g.area * std::cbrt(radius * radius);
}

// Depth (L) of the largest discharge of a closed conduit, whose discharge rises to one peak below
// the crown and falls after it (the friction of the closing crown outgrows the added area). A scan
// finds the neighbourhood of the peak and a golden-section search narrows it.
double peak_discharge_depth(const Channel& channel) {
  const double top = channel.section().top_depth();
  constexpr int kScan = 256;
  int best = kScan;
  double best_discharge = channel.discharge(top);
  for (int i = 1; i < kScan; ++i) {
    const double q = channel.discharge(top * i / kScan);
    if (q > best_discharge) {
      best_discharge = q;
      best = i;
    }
  }
  double low = top * (best - 1) / kScan;
  double high = std::min(top, top * (best + 1) / kScan);
  const double ratio = (std::sqrt(5.0) - 1.0) / 2.0;
  double a = high - ratio * (high - low);
  double b = low + ratio * (high - low);
  double qa = channel.discharge(a);
  double qb = channel.discharge(b);
  for (int i = 0; i < 100 && high - low > 1e-15 * top; ++i) {
    if (qa < qb) {
      low = a;
      a = b;
      qa = qb;
      b = low + ratio * (high - low);
      qb = channel.discharge(b);
    } else {
      high = b;
      b = a;
      qb = qa;
      a = high - ratio * (high - low);
      qa = channel.discharge(a);
    }
  }
  const double found = qa > qb ? a : b;
  return channel.discharge(found) > best_discharge ? found : top * best / kScan;
}

}  // namespace

Channel::Channel(std::shared_ptr<const Section> section, std::vector<double> roughness,
                 double slope, units::System system)
    : section_(std::move(section)),
      roughness_(std::move(roughness)),
      slope_(slope),
      system_(system),
      k_(units::manning_k(system)),
      gravity_(units::gravity(system)),
      max_open_discharge_(std::numeric_limits<double>::infinity()),
      max_open_discharge_depth_(section_->top_depth()) {
  assert(roughness_.size() == section_->subsection_count());
  assert(section_->subsection_count() <= max_subsections);
  for (const double n : roughness_) discharge_factors_.push_back(k_ * std::sqrt(slope_) / n);
  if (section_->closed()) {
    max_open_discharge_depth_ = peak_discharge_depth(*this);
    max_open_discharge_ = discharge(max_open_discharge_depth_);
  }
}

double Channel::discharge(double depth) const {
  if (!(depth > 0.0)) return 0.0;
  std::array<Geometry, max_subsections> parts;
  const auto used = std::span<Geometry>(parts).first(discharge_factors_.size());
  section_->subsections(depth, used);
  double total = 0.0;
  for (std::size_t i = 0; i < used.size(); ++i) {
    total += discharge_factors_[i] * area_times_radius_power(used[i]);
  }
  return total;
}

HydraulicState Channel::at_depth(double depth) const {
  HydraulicState state;
  state.depth = depth;
  if (!(depth > 0.0)) {
    state.flags.set(Flag::below_zero_flow);
    return state;
  }
  std::array<Geometry, max_subsections> parts;
  const auto used = std::span<Geometry>(parts).first(discharge_factors_.size());
  section_->subsections(depth, used);
  for (std::size_t i = 0; i < used.size(); ++i) {
    state.area += used[i].area;
    state.wetted_perimeter += used[i].wetted_perimeter;
    state.top_width += used[i].top_width;
    state.discharge += discharge_factors_[i] * area_times_radius_power(used[i]);
  }
  if (state.wetted_perimeter > 0.0) state.hydraulic_radius = state.area / state.wetted_perimeter;
  if (state.area > 0.0) {
    state.velocity = state.discharge / state.area;
    if (state.top_width > 0.0) {
      state.hydraulic_depth = state.area / state.top_width;
      state.froude = state.velocity / std::sqrt(gravity_ * state.hydraulic_depth);
    } else {
      // A full conduit: no free surface, so no surface wave to compare the velocity with. NaN
      // (not 0, which reads as "still water") so that outputs show the number as missing.
      state.hydraulic_depth = std::numeric_limits<double>::infinity();
      state.froude = std::numeric_limits<double>::quiet_NaN();
    }
  }
  if (depth > section_->top_depth()) {
    state.flags.set(section_->closed() ? Flag::surcharged : Flag::above_section);
  }
  if (state.froude > 1.0) state.flags.set(Flag::supercritical);
  return state;
}

}  // namespace stagewell
