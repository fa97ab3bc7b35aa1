// `stagewell table`: a stage-discharge table by the direct formula, for people or as CSV.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <memory>
#include <optional>

#include "commands.hpp"
#include "output_format.hpp"

namespace stagewell::cli {
namespace {

constexpr long kMaxRows = 100000;

struct TableOptions {
  std::string config_path;
  std::string site_id;
  std::optional<double> from;  // stage units
  std::optional<double> to;
  std::optional<double> step;
  std::string flow_units;  // empty: the configuration's discharge unit
  bool csv = false;
};

// A step of 1, 2 or 5 times a power of ten that gives about 25 rows over `span`.
double nice_step(double span) {
  const double raw = span / 25.0;
  const double decade = std::pow(10.0, std::floor(std::log10(raw)));
  for (double multiple : {1.0, 2.0, 5.0}) {
    if (multiple * decade >= raw) return multiple * decade;
  }
  return 10.0 * decade;
}

// from + i * step, rounded to well below the step's last digit so that a table in steps of 0.1
// shows 0.3, not 0.30000000000000004. Division by an exact power of ten gives the double nearest
// the decimal value.
double table_stage(double from, long i, double step) {
  const double stage = from + static_cast<double>(i) * step;
  const int decimals = std::clamp(9 - static_cast<int>(std::floor(std::log10(step))), 0, 15);
  const double scale = std::pow(10.0, decimals);
  const double rounded = std::round(stage * scale) / scale;
  return std::isfinite(rounded) ? rounded : stage;
}

int run_table(const TableOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const auto* site = find_site_or_report(*config, options.site_id);
  if (!site) return kInvalidInput;
  const auto system = config->units;
  const auto flow_unit = flow_unit_or_report(options.flow_units, system);
  if (!flow_unit) return kUsage;
  const auto channel = make_channel(*site, system);

  const double from = options.from.value_or(site->stage_for_depth(0.0, system));
  const double to =
      options.to.value_or(site->stage_for_depth(channel->section().top_depth(), system));
  if (!std::isfinite(from) || !std::isfinite(to) || to <= from) {
    std::cerr << fmt::format("--to ({}) must be greater than --from ({})\n", to, from);
    return kUsage;
  }
  const double step = options.step.value_or(nice_step(to - from));
  if (!(step > 0.0) || !std::isfinite(step)) {
    std::cerr << "--step must be greater than 0\n";
    return kUsage;
  }
  const long rows = static_cast<long>(std::floor((to - from) / step + 1e-9)) + 1;
  if (rows > kMaxRows) {
    std::cerr << fmt::format("{} rows asked for; at most {}: use a larger --step\n", rows,
                             kMaxRows);
    return kUsage;
  }

  const auto stage_unit = units::symbol(site->stage.units);
  const auto length = units::length_symbol(system);
  const auto flow = units::symbol(*flow_unit);
  const auto velocity = units::velocity_symbol(system);
  if (options.csv) {
    // Units as UCUM codes in the header, as in every CSV stagewell writes.
    std::cout << fmt::format("stage ({}),depth ({}),discharge ({}),velocity ({}),froude,flags\n",
                             units::ucum(site->stage.units), units::ucum_length(system),
                             units::ucum(*flow_unit), units::ucum_velocity(system));
  } else {
    std::cout << fmt::format("{} ({}), {}, n {}, slope {}\n", site->id, site->name,
                             describe_section(site->section, system),
                             format_number(site->roughness.front(), 3),
                             format_number(site->slope, 3));
    std::cout << fmt::format("{:>12} {:>12} {:>14} {:>12} {:>8}  {}\n",
                             fmt::format("stage {}", stage_unit), fmt::format("depth {}", length),
                             fmt::format("discharge {}", flow),
                             fmt::format("velocity {}", velocity), "Froude", "flags");
  }
  for (long i = 0; i < rows; ++i) {
    const double stage = table_stage(from, i, step);
    const double depth = site->depth_for_stage(stage, system);
    const auto state = channel->at_depth(depth);
    const double discharge = flow_in(state.discharge, system, *flow_unit);
    if (options.csv) {
      // A full conduit has no Froude number: an empty field, which CSV readers take as missing.
      const std::string froude = std::isnan(state.froude) ? "" : fmt::format("{}", state.froude);
      std::cout << fmt::format("{},{},{},{},{},{}\n", stage, depth, discharge, state.velocity,
                               froude, state.flags.joined(' '));
    } else {
      std::cout << fmt::format("{:>12} {:>12} {:>14} {:>12} {:>8}  {}\n", format_number(stage),
                               format_number(depth), format_number(discharge),
                               format_number(state.velocity), format_number(state.froude, 3),
                               state.flags.joined(' '));
    }
  }
  if (!options.csv) print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_table_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "table", "Print a stage-discharge table (direct formula) for one site");
  auto options = std::make_shared<TableOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site_id, "Site id")->required();
  command->add_option("--from", options->from,
                      "First stage, in stage units (default: the stage of zero flow)")
      ->check(decimal_number());
  command->add_option("--to", options->to,
                      "Last stage, in stage units (default: the stage at the top of the section)")
      ->check(decimal_number());
  command->add_option("--step", options->step,
                      "Stage step, in stage units (default: about 25 rows)")
      ->check(decimal_number());
  command->add_option("--flow-units", options->flow_units,
                      "Discharge in: " + units::flow_choices() +
                          " (any case; default: the configuration's, m3/s or ft3/s)");
  command->add_flag("--csv", options->csv,
                    "CSV with a header line (units as UCUM codes), full precision");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_table(*options); }; });
}

}  // namespace stagewell::cli
