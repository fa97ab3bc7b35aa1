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
