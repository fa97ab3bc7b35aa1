// What every subcommand of `stagewell` shares: its exit codes, the work it registers, the
// --config option, and loading the configuration or finding a site with every error reported.
#pragma once

#include <CLI/CLI.hpp>
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/config.hpp"
#include "stagewell/store.hpp"

namespace stagewell::cli {

// Conventional exit codes.
enum Exit : int {
  kOk = 0,
  kInvalidInput = 1,  // the configuration, a value or a file is wrong
  kUsage = 2,         // the command line is wrong
};

// What a subcommand registers: the work to run once the command line has parsed.
using Action = std::function<int()>;

// Every subcommand has `--config FILE`; this adds it (optional: see find_config_or_report).
CLI::Option* add_config_option(CLI::App& command, std::string& path);

// The configuration to use when the command line names none (config.hpp,
// user_config_candidates); nullopt after printing where it looked.
std::optional<std::string> find_config_or_report(const EnvironmentLookup& environment);

// Loads and validates the configuration at `path`, or the one found when `path` is empty; on
// failure prints every error to stderr.
std::optional<Config> load_config_or_report(const std::string& path);

// The configuration's database, read-write (created when missing); nullopt after printing why.
std::optional<Store> open_store_or_report(const Config& config);

// An RFC 3339 time option (`--from`, `--to`): `absent` when empty, nullopt after printing what
// is wrong with it.
std::optional<std::int64_t> parse_time_option(const std::string& text, std::string_view name,
                                              std::int64_t absent);

// A check for number options (--stage, --flow, --step...): text that is a number with a decimal
// comma ("1,23") is refused with a hint to write "1.23", anything else that is not a number with
// a plain "not a number" message, before CLI11's generic conversion error.
CLI::Validator decimal_number();

// The site with this id, or prints the known ids to stderr and returns nullptr.
const SiteConfig* find_site_or_report(const Config& config, const std::string& site_id);

}  // namespace stagewell::cli
