#include "stagewell/config.hpp"

namespace stagewell {

double SiteConfig::depth_for_stage(double raw_stage, units::System system) const {
  const double depth_in_stage_units = raw_stage + stage.offset - stage.zero_flow;
  return depth_in_stage_units * units::to_m(stage.units) / units::length_to_m(system);
}

double SiteConfig::stage_for_depth(double depth, units::System system) const {
  return depth * units::length_to_m(system) / units::to_m(stage.units) - stage.offset +
         stage.zero_flow;
}

const SiteConfig* Config::find_site(std::string_view site_id) const {
  for (const auto& site : sites) {
    if (site.id == site_id) return &site;
  }
  return nullptr;
}

}  // namespace stagewell

namespace stagewell {

double StageCorrection::at(std::int64_t time_ms) const {
  const double share =
      static_cast<double>(time_ms - from_ms) / static_cast<double>(to_ms - from_ms);
  return offset + drift * share;
}

const SiteConfig& SiteConfig::version_at(std::int64_t time_ms) const {
  // Changes are sorted by from_ms (validated): the last one that has begun is in force.
  const SiteConfig* in_force = this;
  for (const auto& change : changes) {
    if (change.from_ms > time_ms) break;
    in_force = &change.site;
  }
  return *in_force;
}

const StageCorrection* SiteConfig::correction_at(std::int64_t time_ms) const {
  for (const auto& correction : corrections) {
    if (correction.from_ms > time_ms) break;
    if (time_ms < correction.to_ms) return &correction;
  }
  return nullptr;
}

}  // namespace stagewell
