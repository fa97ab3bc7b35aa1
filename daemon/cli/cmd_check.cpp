// `stagewell check`: validate a configuration and summarise its sites.
#include <fmt/format.h>

#include <iostream>
#include <memory>

#include "commands.hpp"
#include "output_format.hpp"

namespace stagewell::cli {
namespace {

int run_check(const std::string& config_path) {
  const auto config = load_config_or_report(config_path);
  if (!config) return kInvalidInput;
  const auto system = config->units;
  std::cout << fmt::format("{}: valid; {} site{}, {} units (lengths in {}, discharge in {})\n",
                           config_path, config->sites.size(), config->sites.size() == 1 ? "" : "s",
                           units::name(system), units::length_symbol(system),
                           units::discharge_symbol(system));
  std::cout << "  database   " << config->database.string() << '\n';
  std::cout << "  time zone  " << config->timezone << " (the local day of daily figures)\n";
  std::cout << "  sources    " << config->sources.size() << '\n';
  for (const auto& site : config->sites) {
    const auto channel = make_channel(site, system);
    const double top = channel->section().top_depth();
    const double capacity = channel->discharge(top);
    std::string roughness;
    for (double n : site.roughness)
      roughness += (roughness.empty() ? "" : "/") + format_number(n, 3);
    std::cout << fmt::format("\n  {}  {}\n", site.id, site.name);
    std::cout << fmt::format("    section    {}\n", describe_section(site.section, system));
    std::cout << fmt::format("    Manning n  {}   slope {}\n", roughness,
                             format_number(site.slope, 3));
    std::cout << fmt::format("    stage      in {}, offset {}, zero flow at {}\n",
                             units::symbol(site.stage.units), format_number(site.stage.offset),
                             format_number(site.stage.zero_flow));
    std::cout << fmt::format(
        "    full       depth {} {} (stage {} {}) carries {} {}\n", format_number(top),
        units::length_symbol(system), format_number(site.stage_for_depth(top, system)),
        units::symbol(site.stage.units), format_number(capacity), units::discharge_symbol(system));
  }
  return kOk;
}

}  // namespace

void add_check_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "check", "Validate a configuration, report every error, and summarise its sites");
  auto path = std::make_shared<std::string>();
  add_config_option(*command, *path);
  command->footer(
      "Exit status: 0 when valid, 1 when the configuration has errors, 2 on usage errors.");
  command->final_callback([&chosen, path] { chosen = [path] { return run_check(*path); }; });
}

}  // namespace stagewell::cli
