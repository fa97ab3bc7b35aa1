// What the reports `stagewell daily`, `stats` and `plot` share: their options for the site, the
// period and the units, and opening the site's daily figures read-only.
#pragma once

#include <CLI/CLI.hpp>
#include <cstdint>
#include <expected>
#include <optional>
#include <string>
#include <vector>

#include "command.hpp"
#include "output_format.hpp"
#include "stagewell/daily_reader.hpp"
#include "stagewell/statistics.hpp"

namespace stagewell::cli {

struct ReportOptions {
  std::string config_path;
  std::string site_id;
  std::string from;  // 'YYYY-MM-DD', local; empty: the start of the site's record
  std::string to;    // inclusive
  std::string flow_units;
  std::string volume_units;
};

// Adds --config, --site, --from, --to (required when `period_required`), --flow-units and
// --volume-units.
void add_report_options(CLI::App& command, ReportOptions& options, bool period_required);

struct Report {
  Config config;
  SiteConfig site;
  daily::DailyReader reader;
  daily::Day from;
  daily::Day to;
  stats::Conversion units;
};

// Loads the configuration, opens the figures and settles the period and units. On failure it
// has told the user why and returns the exit status.
std::expected<Report, int> open_report(const ReportOptions& options);

// The daily figures of the report's period. On failure it has told the user why and returns
// nullopt (exit status kInvalidInput).
std::optional<std::vector<daily::DayFigures>> report_days(Report& report);

// "raceway-a (Hatchery raceway A outlet)", or the id alone when the site has no other name.
std::string site_title(const SiteConfig& site);

// "06:15:00" in `zone`.
std::string local_time_of_day(std::int64_t time_ms, const TimeZone& zone);

}  // namespace stagewell::cli
