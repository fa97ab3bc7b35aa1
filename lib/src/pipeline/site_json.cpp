#include "site_json.hpp"

#include <nlohmann/json.hpp>

namespace stagewell {
namespace {

nlohmann::json section_json(const SectionSpec& spec) {
  nlohmann::json out = {{"shape", std::string(name(spec.shape))}};
  switch (spec.shape) {
    case Shape::rectangular:
      out["width"] = spec.width;
      out["height"] = spec.height;
      break;
    case Shape::trapezoidal:
      out["width"] = spec.width;
      out["side_slope"] = {spec.side_slope_left, spec.side_slope_right};
      out["height"] = spec.height;
      break;
    case Shape::triangular:
      out["side_slope"] = {spec.side_slope_left, spec.side_slope_right};
      out["height"] = spec.height;
      break;
    case Shape::circular:
      out["diameter"] = spec.diameter;
      break;
    case Shape::surveyed: {
      auto points = nlohmann::json::array();
      for (const auto& [station, elevation] : spec.points) points.push_back({station, elevation});
      out["points"] = std::move(points);
      out["breaks"] = spec.breaks;
      break;
    }
  }
  return out;
}

template <typename T>
nlohmann::json optional_json(const std::optional<T>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

}  // namespace

namespace {

nlohmann::json site_json(const SiteConfig& site, units::System system) {
  // Keys sorted (nlohmann's default object is ordered by key), numbers in shortest round-trip
  // form: the same configuration always gives the same text, hence the same version.
  const nlohmann::json out = {
      {"units", std::string(units::name(system))},
      {"section", section_json(site.section)},
      {"roughness", site.roughness},
      {"slope", site.slope},
      {"stage",
       {{"units", std::string(units::symbol(site.stage.units))},
        {"offset", site.stage.offset},
        {"zero_flow", site.stage.zero_flow}}},
      {"checks",
       {{"min_stage", optional_json(site.checks.min_stage)},
        {"max_stage", optional_json(site.checks.max_stage)},
        {"spike", optional_json(site.checks.spike)},
        {"spike_window", site.checks.spike_window},
        {"max_rate", optional_json(site.checks.max_rate)},
        {"flatline_s", site.checks.flatline_s},
        {"max_gap_s", site.checks.max_gap_s},
        {"max_clock_skew_s", site.checks.max_clock_skew_s},
        {"unsteady", site.checks.unsteady}}},
      {"uncertainty",
       {{"roughness", site.uncertainty.roughness},
        {"slope", site.uncertainty.slope},
        {"stage", site.uncertainty.stage}}},
  };
  return out;
}

}  // namespace

std::string site_config_json(const SiteConfig& site, units::System system) {
  return site_json(site, system).dump();
}

std::string site_config_json(const SiteConfig& site, units::System system,
                             const StageCorrection* correction) {
  nlohmann::json out = site_json(site, system);
  if (correction != nullptr) {
    out["correction"] = {{"from_ms", correction->from_ms},
                         {"to_ms", correction->to_ms},
                         {"offset", correction->offset},
                         {"drift", correction->drift}};
  }
  return out.dump();
}

}  // namespace stagewell
