// `stagewell check`: validate a configuration and summarise its sites.
#include <fmt/format.h>

#include <algorithm>
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "commands.hpp"
#include "output_format.hpp"
#include "stagewell/discharge_dips.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

constexpr std::string_view kIndent = "               ";  // under the value column

// True when two versions of a site have the same falls of discharge, at the same stages: the same
// section, roughness, slope and stage conversion.
bool same_falls(const SiteConfig& a, const SiteConfig& b) {
  const SectionSpec& x = a.section;
  const SectionSpec& y = b.section;
  return x.shape == y.shape && x.width == y.width && x.side_slope_left == y.side_slope_left &&
         x.side_slope_right == y.side_slope_right && x.diameter == y.diameter &&
         x.height == y.height && x.points == y.points && x.breaks == y.breaks &&
         a.roughness == b.roughness && a.slope == b.slope && a.stage.units == b.stage.units &&
         a.stage.offset == b.stage.offset && a.stage.zero_flow == b.stage.zero_flow;
}

// "from 203.0 to 203.4 cm", or "past 203.0 cm" when the fall is too sudden to show a range.
std::string stage_range(const SiteConfig& site, units::System system, const DischargeDip& dip) {
  const auto unit = units::symbol(site.stage.units);
  const auto from = format_number(site.stage_for_depth(dip.from_depth, system));
  const auto to = format_number(site.stage_for_depth(dip.to_depth, system));
  if (from == to) return fmt::format("past {} {}", from, unit);
  return fmt::format("from {} to {} {}", from, to, unit);
}

// "left bank top   station 60 m, stage 210.0 cm (overtopped here)"
std::string describe_bank(const SiteConfig& site, units::System system, std::string_view side,
                          const BankTop& bank, double lowest_elevation) {
  return fmt::format("{:<15}station {} {}, stage {} {}{}", fmt::format("{} bank top", side),
                     bank.station, units::length_symbol(system),
                     format_number(site.stage_for_depth(bank.elevation - lowest_elevation, system)),
                     units::symbol(site.stage.units), bank.overtopped ? " (overtopped here)" : "");
}

// Warns of each stretch of stage over which the site's discharge falls as the stage rises, and
// for a surveyed section says where breaks would divide it (docs/hydraulics.md, "When discharge
// falls as the stage rises"). Prints nothing when discharge never falls.
// `version`, when not empty, is printed on a line of its own before the first warning.
void report_dips(const SiteConfig& site, units::System system, std::string_view version) {
  const auto channel = make_channel(site, system);
  const auto dips = discharge_dips(*channel);
  if (dips.empty()) return;
  if (!version.empty()) std::cout << "    " << version << '\n';
  const auto flow = units::discharge_symbol(system);
  const auto stage_unit = units::symbol(site.stage.units);
  const bool surveyed = site.section.shape == Shape::surveyed;
  double lowest = 0.0;
  if (surveyed) {
    lowest = std::min_element(site.section.points.begin(), site.section.points.end(),
                              [](auto& a, auto& b) { return a.second < b.second; })
                 ->second;
  }
  std::vector<double> stations;  // bank tops to suggest as breaks, not already breaks
  for (const DischargeDip& dip : dips) {
    std::cout << fmt::format("    warning    discharge falls by {:.1f} % as the stage rises {}\n",
                             100.0 * dip.loss_fraction(), stage_range(site, system, dip));
    const auto back =
        dip.recovered_depth
            ? fmt::format("back to {} {} only at stage {} {}", format_number(dip.from_discharge),
                          flow, format_number(site.stage_for_depth(*dip.recovered_depth, system)),
                          stage_unit)
            : fmt::format("not back to {} {} below the top of the section",
                          format_number(dip.from_discharge), flow);
    std::cout << fmt::format("{}({} to {} {}); {}\n", kIndent, format_number(dip.from_discharge),
                             format_number(dip.to_discharge), flow, back);
    if (!surveyed) continue;
    const auto banks = main_channel_banks(site.section, dip.from_depth);
    for (const auto& [side, bank] : {std::pair{"left", banks.left}, {"right", banks.right}}) {
      if (!bank) continue;
      std::cout << kIndent << describe_bank(site, system, side, *bank, lowest) << '\n';
      const auto& breaks = site.section.breaks;
      if (std::find(breaks.begin(), breaks.end(), bank->station) == breaks.end()) {
        stations.push_back(bank->station);
      }
    }
  }
  std::sort(stations.begin(), stations.end());
  stations.erase(std::unique(stations.begin(), stations.end()), stations.end());
  if (!surveyed || stations.empty()) {
    std::cout << fmt::format(
        "    note       Manning's equation gives this for the section as configured: check its\n"
        "{}shape, and divide it where it widens abruptly (docs/hydraulics.md,\n"
        "{}\"When discharge falls as the stage rises\")\n",
        kIndent, kIndent);
    return;
  }
  std::vector<double> breaks = site.section.breaks;
  breaks.insert(breaks.end(), stations.begin(), stations.end());
  std::sort(breaks.begin(), breaks.end());
  std::cout << fmt::format(
      "    suggest    {}: water spreading over a wide, flat\n"
      "{}overbank adds wetted perimeter faster than flow area. Divide it at the bank tops:\n"
      "{}under `section`, `breaks: [{}]` ({}), and `roughness` with {} values, one n per\n"
      "{}subsection (docs/hydraulics.md, \"When discharge falls as the stage rises\")\n",
      site.section.breaks.empty() ? "the section is computed as one"
                                  : "its subsections do not set the overbank apart",
      kIndent, kIndent, fmt::join(breaks, ", "), units::length_symbol(system), breaks.size() + 1,
      kIndent);
}

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
                           config->sites.size() == 1 ? "" : "s", units::name(system),
                           units::length_symbol(system), units::discharge_symbol(system));
  std::cout << "  database   " << config->database.string() << '\n';
  std::cout << "  time zone  " << config->timezone << " (the local day of daily figures)\n";
  std::cout << "  sources    " << config->sources.size() << '\n';
  if (config->warehouse) {
    std::cout << fmt::format("  warehouse  {} (schema {}) as plant {}; `stagewell warehouse "
                             "check` connects\n",
                             config->warehouse->postgresql, config->warehouse->schema,
                             config->warehouse->plant);
  }
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
    report_dips(site, system, "");
    const SiteConfig* previous = &site;
    for (const SiteChange& change : site.changes) {
      if (same_falls(*previous, change.site)) continue;
      previous = &change.site;
      report_dips(change.site, system,
                  fmt::format("changes, from {}:", format_timestamp_utc(change.from_ms)));
    }
  }
  std::cout << '\n';
  print_caution(std::cout);
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
