// `stagewell check`: validate a configuration and summarise its sites.
#include <fmt/format.h>

#include <filesystem>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "output_format.hpp"
#include "stagewell/store.hpp"

namespace stagewell::cli {
namespace {

// SQLite's integrity check of the configuration's database: true when it finds nothing.
bool check_database(const std::filesystem::path& database) {
  std::cout << fmt::format("\n  database check ({}): ", database.string()) << std::flush;
  const auto problems = Store::check_integrity(database);
  if (!problems) {
    std::cout << "cannot be read\n";
    std::cerr << database.string() << ": " << problems.error().message << '\n';
    return false;
  }
  if (problems->empty()) {
    std::cout << "sound (SQLite's integrity check finds nothing)\n";
    return true;
  }
  std::cout << problems->size() << " problem(s) found by SQLite's integrity check\n";
  for (const auto& problem : *problems) std::cout << "    " << problem << '\n';
  std::cout << "  The file is damaged: stop the service, keep a copy of the file, and restore the "
               "latest backup (docs/operations.md, \"A damaged database\").\n";
  return false;
}

int run_check(const std::string& config_path, bool database) {
  const auto config = load_config_or_report(config_path);
  if (!config) return kInvalidInput;
  const auto system = config->units;
  std::cout << fmt::format("{}: valid; {} site{}, {} units (lengths in {}, discharge in {})\n",
                           config->file.string(), config->sites.size(),
                           config->sites.size() == 1 ? "" : "s",
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
  if (database && !check_database(config->database)) return kInvalidInput;
  return kOk;
}

}  // namespace

void add_check_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "check", "Validate a configuration, report every error, and summarise its sites");
  auto path = std::make_shared<std::string>();
  auto database = std::make_shared<bool>(false);
  add_config_option(*command, *path);
  command->add_flag("--database", *database,
                    "Also run SQLite's integrity check on the configuration's database (read only; "
                    "a few seconds per 100 MB)");
  command->footer(
      "Exit status: 0 when valid (and, with --database, the database sound), 1 when the "
      "configuration has errors or the database is damaged or unreadable, 2 on usage errors.");
  command->final_callback([&chosen, path, database] {
    chosen = [path, database] { return run_check(*path, *database); };
  });
}

}  // namespace stagewell::cli
