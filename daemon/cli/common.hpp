// Shared pieces of the `stagewell` command-line program: exit codes, loading the configuration
// with every error reported, number formatting, the caution line.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <iosfwd>
#include <memory>
#include <nlohmann/json_fwd.hpp>
#include <optional>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell::cli {

// Conventional exit codes.
enum Exit : int {
  kOk = 0,
  kInvalidInput = 1,  // the configuration, a value or a file is wrong
  kUsage = 2,         // the command line is wrong
};

// What a subcommand registers: the work to run once the command line has parsed.
using Action = std::function<int()>;

// Every subcommand has `--config FILE`; this adds it.
CLI::Option* add_config_option(CLI::App& command, std::string& path);

// Loads and validates the configuration; on failure prints every error to stderr.
std::optional<Config> load_config_or_report(const std::string& path);

// The site with this id, or prints the known ids to stderr and returns nullptr.
const SiteConfig* find_site_or_report(const Config& config, const std::string& site_id);

// A number for people: `significant` digits, no exponent for ordinary magnitudes.
std::string format_number(double value, int significant = 4);

// A number for JSON: full precision, null when not finite.
nlohmann::json json_number(double value);

// The short caution printed under results meant for people.
void print_caution(std::ostream& out);

// One line describing a site's section, e.g. "trapezoidal, bottom 3 m, side slopes 1.5:1, 1.2 m
// deep".
std::string describe_section(const SectionSpec& spec, units::System system);

}  // namespace stagewell::cli
