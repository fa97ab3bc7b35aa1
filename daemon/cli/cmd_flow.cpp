// `stagewell flow` (stage -> everything the hydraulics core computes) and `stagewell depth`
// (discharge -> normal and critical depth). Both use the direct formula, not a rating table.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>

#include "commands.hpp"
#include "output_format.hpp"
#include "stagewell/timestamp.hpp"
#include "stagewell/uncertainty.hpp"

namespace stagewell::cli {
namespace {

struct FlowOptions {
  std::string config_path;
  std::string site_id;
  double stage = 0.0;
  std::optional<double> rate;  // stage units per hour, for the Jones estimate
  std::string flow_units;      // empty: the configuration's discharge unit
  bool json = false;
};

struct DepthOptions {
  std::string config_path;
  std::string site_id;
  double flow = 0.0;
  std::string flow_units;  // empty: the configuration's discharge unit
  bool json = false;
};

nlohmann::json flags_json(Flags flags) {
  auto array = nlohmann::json::array();
  for (auto name : flags.names()) array.push_back(std::string(name));
  return array;
}

int run_flow(const FlowOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const auto* site = find_site_or_report(*config, options.site_id);
  if (!site) return kInvalidInput;
  if (!std::isfinite(options.stage)) {
    std::cerr << "--stage must be a finite number\n";
    return kUsage;
  }
  const auto system = config->units;
  const auto flow_unit = flow_unit_or_report(options.flow_units, system);
  if (!flow_unit) return kUsage;
  // The keys in force now: a change (say, a calibrated roughness) from today on counts.
  const SiteConfig& keys = site->version_at(system_now_ms());
  const auto channel = make_channel(keys, system);
  const double depth = keys.depth_for_stage(options.stage, system);
  const HydraulicState state = channel->at_depth(depth);
  const double discharge = flow_in(state.discharge, system, *flow_unit);
  // The band and the Jones estimate (uncertainty.hpp), where the discharge is positive.
  const double stage_to_length = units::to_m(keys.stage.units) / units::length_to_m(system);
  std::optional<double> band;
  std::optional<double> jones;
  if (depth > 0.0) {
    const StageResponse response = stage_response(*channel, depth);
    band = relative_band(response, keys.uncertainty, stage_to_length);
    if (options.rate) {
      const double rate = *options.rate * stage_to_length / 3600.0;  // L/s
      if (const auto q = jones_discharge(response, keys.slope, rate)) {
        jones = flow_in(*q, system, *flow_unit);
      }
    }
  }
  const double low = band ? std::max(0.0, discharge * (1.0 - *band)) : discharge;
  const double high = band ? discharge * (1.0 + *band) : discharge;
  const auto rate_unit = fmt::format("{}/h", units::ucum(keys.stage.units));

  if (options.json) {
    nlohmann::json out = {
        {"site", site->id},
        {"stage", options.stage},
        {"depth", json_number(depth)},
        {"area", json_number(state.area)},
        {"wetted_perimeter", json_number(state.wetted_perimeter)},
        {"hydraulic_radius", json_number(state.hydraulic_radius)},
        {"top_width", json_number(state.top_width)},
        {"hydraulic_depth", json_number(state.hydraulic_depth)},
        {"velocity", json_number(state.velocity)},
        {"discharge", json_number(discharge)},
        {"discharge_low", json_number(low)},
        {"discharge_high", json_number(high)},
        {"band_percent", band ? json_number(100.0 * *band) : nlohmann::json(nullptr)},
        {"froude", json_number(state.froude)},
        {"flags", flags_json(state.flags)},
        {"units",
         {{"stage", units::ucum(keys.stage.units)},
          {"length", units::ucum_length(system)},
          {"area", units::ucum_area(system)},
          {"velocity", units::ucum_velocity(system)},
          {"discharge", units::ucum(*flow_unit)}}},
    };
    if (options.rate) {
      out["rate"] = *options.rate;
      out["discharge_jones"] = jones ? json_number(*jones) : nlohmann::json(nullptr);
      out["units"]["rate"] = rate_unit;
    }
    std::cout << out.dump(2) << '\n';
    return kOk;
  }

  const auto length = units::length_symbol(system);
  std::cout << fmt::format("{} ({}), {}\n", site->id, site->name,
                           describe_section(keys.section, system));
  const auto row = [](std::string_view label, double value, std::string_view unit) {
    std::cout << fmt::format("  {:<18}{:>12} {}\n", label, format_number(value), unit);
  };
  row("stage", options.stage, units::symbol(keys.stage.units));
  row("depth", depth, length);
  row("flow area", state.area, units::area_symbol(system));
  row("wetted perimeter", state.wetted_perimeter, length);
  row("hydraulic radius", state.hydraulic_radius, length);
  row("top width", state.top_width, length);
  row("hydraulic depth", state.hydraulic_depth, length);
  row("mean velocity", state.velocity, units::velocity_symbol(system));
  row("discharge", discharge, units::symbol(*flow_unit));
  if (options.flow_units.empty()) {  // the same in the small unit of the system, for small flows
    const auto other_flow =
        system == units::System::metric ? units::Flow::litres_per_s : units::Flow::us_gal_per_min;
    row("", flow_in(state.discharge, system, other_flow), units::symbol(other_flow));
  }
  if (band) {
    std::cout << fmt::format("  {:<18}{:>12} to {} {}  (±{} %, about 95 %)\n", "discharge band",
                             format_number(low), format_number(high), units::symbol(*flow_unit),
                             format_number(100.0 * *band));
  }
  if (options.rate) {
    const auto stage_units = units::symbol(keys.stage.units);
    if (jones) {
      std::cout << fmt::format("  {:<18}{:>12} {}  (stage changing {} {}/h; {:+.1f} %)\n",
                               "unsteady (Jones)", format_number(*jones), units::symbol(*flow_unit),
                               format_number(*options.rate), stage_units,
                               100.0 * (*jones / discharge - 1.0));
    } else {
      std::cout << fmt::format(
          "  {:<18}{:>12}  (no estimate at {} {}/h: no free surface, no "
          "flow, or the stage falls too fast for the formula)\n",
          "unsteady (Jones)", "n/a", format_number(*options.rate), stage_units);
    }
  }
  row("Froude number", state.froude,
      std::isnan(state.froude) ? "(flowing full: no free surface)"
      : state.froude > 1.0     ? "(supercritical)"
                               : "(subcritical)");
  std::cout << fmt::format("  {:<18}{:>12}\n", "flags",
                           state.flags.empty() ? "none" : state.flags.joined(' '));
  print_caution(std::cout);
  return kOk;
}

int run_depth(const DepthOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const auto* site = find_site_or_report(*config, options.site_id);
  if (!site) return kInvalidInput;
  const auto system = config->units;
  const auto flow_unit = flow_unit_or_report(options.flow_units, system);
  if (!flow_unit) return kUsage;
  // In the configuration's discharge unit, which the hydraulics work in; answered in flow_unit.
  const double discharge = options.flow / flow_in(1.0, system, *flow_unit);
  const auto channel = make_channel(*site, system);
  const auto normal = channel->normal_depth(discharge);
  if (!normal) {
    std::cerr << "normal depth: " << normal.error().message << '\n';
    return kInvalidInput;
  }
  const auto critical = channel->critical_depth(discharge);
  if (!critical) {
    std::cerr << "critical depth: " << critical.error().message << '\n';
    return kInvalidInput;
  }
  const double normal_stage = site->stage_for_depth(*normal, system);
  const double critical_stage = site->stage_for_depth(*critical, system);

  if (options.json) {
    nlohmann::json out = {
        {"site", site->id},
        {"discharge", options.flow},
        {"normal_depth", *normal},
        {"normal_stage", normal_stage},
        {"critical_depth", *critical},
        {"critical_stage", critical_stage},
        {"units",
         {{"stage", units::ucum(site->stage.units)},
          {"length", units::ucum_length(system)},
          {"discharge", units::ucum(*flow_unit)}}},
    };
    std::cout << out.dump(2) << '\n';
    return kOk;
  }
  const auto length = units::length_symbol(system);
  const auto stage_unit = units::symbol(site->stage.units);
  std::cout << fmt::format("{} ({}), {}\n", site->id, site->name,
                           describe_section(site->section, system));
  std::cout << fmt::format("  {:<16}{:>12} {}\n", "discharge", format_number(options.flow),
                           units::symbol(*flow_unit));
  std::cout << fmt::format("  {:<16}{:>12} {}   (stage {} {})\n", "normal depth",
                           format_number(*normal), length, format_number(normal_stage), stage_unit);
  std::cout << fmt::format("  {:<16}{:>12} {}   (stage {} {})\n", "critical depth",
                           format_number(*critical), length, format_number(critical_stage),
                           stage_unit);
  std::cout << "  "
            << (*normal < *critical ? "steep: uniform flow here is supercritical"
                                    : "mild: uniform flow here is subcritical")
            << '\n';
  if (*normal > channel->section().top_depth()) {
    std::cout << "  warning: normal depth is above the top of the section\n";
  }
  print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_flow_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "flow", "Compute depth, geometry, velocity, discharge and Froude number at one stage");
  auto options = std::make_shared<FlowOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site_id, "Site id")->required();
  command->add_option("--stage", options->stage, "Stage reading, in the site's stage units")
      ->required()
      ->check(decimal_number());
  command->add_option("--flow-units", options->flow_units,
                      "Discharge in: " + units::flow_choices() +
                          " (any case; default: the configuration's, m3/s or ft3/s)");
  command
      ->add_option("--rate", options->rate,
                   "Rate of change of stage, site's stage units per hour (rising > 0): also "
                   "print the unsteady-flow discharge by the Jones formula")
      ->check(decimal_number());
  command->add_flag("--json", options->json,
                    "One JSON object, numbers in the configuration's units (discharge in "
                    "--flow-units), units as UCUM codes");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_flow(*options); }; });
}

void add_depth_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "depth", "Compute normal and critical depth (and their stages) for a discharge");
  auto options = std::make_shared<DepthOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site_id, "Site id")->required();
  command
      ->add_option("--flow", options->flow,
                   "Discharge, in the configuration's unit (m3/s or ft3/s) unless --flow-units")
      ->required()
      ->check(decimal_number());
  command->add_option("--flow-units", options->flow_units,
                      "Unit of --flow: " + units::flow_choices() + " (any case)");
  command->add_flag("--json", options->json,
                    "One JSON object, numbers in the configuration's units (discharge in "
                    "--flow-units), units as UCUM codes");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_depth(*options); }; });
}

}  // namespace stagewell::cli
