#include "report.hpp"

#include <cctz/time_zone.h>
#include <fmt/format.h>

#include <iostream>

namespace stagewell::cli {

void add_report_options(CLI::App& command, ReportOptions& options, bool period_required) {
  add_config_option(command, options.config_path);
  command.add_option("-s,--site", options.site_id, "Site id")->required();
  auto* from = command.add_option(
      "--from", options.from,
      "First local day, YYYY-MM-DD" + std::string(period_required ? ""
                                                                  : " (default: the first "
                                                                    "day of the record)"));
  auto* to = command.add_option("--to", options.to,
                                "Last local day, YYYY-MM-DD, included" +
                                    std::string(period_required ? ""
                                                                : " (default: the last day "
                                                                  "of the record)"));
  if (period_required) {
    from->required();
    to->required();
  }
  command.add_option(
      "--flow-units", options.flow_units,
      "Discharge in: " + units::flow_choices() +
          " (any case; default: the configuration's, m3/s or ft3/s)");
  command.add_option(
      "--volume-units", options.volume_units,
      "Volume in: " + units::volume_choices() +
          " (any case; default: the configuration's, m3 or ft3)");
}

std::expected<Report, int> open_report(const ReportOptions& options) {
  auto config = load_config_or_report(options.config_path);
  if (!config) return std::unexpected(kInvalidInput);
  const SiteConfig* site = find_site_or_report(*config, options.site_id);
  if (!site) return std::unexpected(kInvalidInput);

  const std::optional<units::Flow> flow = flow_unit_or_report(options.flow_units, config->units);
  if (!flow) return std::unexpected(kUsage);
  std::optional<units::Volume> volume;
  if (!options.volume_units.empty()) {
    volume = units::parse_volume(options.volume_units);
    if (!volume) {
      std::cerr << fmt::format("unknown --volume-units '{}'; use one of: {} (any case)\n",
                               options.volume_units, units::volume_choices());
      return std::unexpected(kUsage);
    }
  }
  std::optional<daily::Day> from;
  std::optional<daily::Day> to;
  for (const auto& [text, out, name] :
       {std::tuple{&options.from, &from, "--from"}, std::tuple{&options.to, &to, "--to"}}) {
    if (text->empty()) continue;
    *out = daily::parse_day(*text);
    if (!*out) {
      std::cerr << fmt::format("{} '{}' is not a date; write YYYY-MM-DD, e.g. 2026-03-01\n", name,
                               *text);
      return std::unexpected(kUsage);
    }
  }

  auto reader = daily::DailyReader::open(*config, *site);
  if (!reader) {
    std::cerr << fmt::format("cannot read the daily figures of {} from {}: {}\n", site->id,
                             config->database.string(), reader.error().message);
    return std::unexpected(kInvalidInput);
  }
  if (!from || !to) {
    auto record = reader->record_days();
    if (!record) {
      std::cerr << record.error().message << '\n';
      return std::unexpected(kInvalidInput);
    }
    if (!*record) {
      std::cerr << fmt::format("{} holds no readings of site {}\n", config->database.string(),
                               site->id);
      return std::unexpected(kInvalidInput);
    }
    if (!from) from = (*record)->first;
    if (!to) to = (*record)->second;
  }
  if (*to < *from) {
    std::cerr << fmt::format("--to ({}) is before --from ({})\n", daily::format_day(*to),
                             daily::format_day(*from));
    return std::unexpected(kUsage);
  }
  if (reader->stale()) {
    std::cerr << "note: the stored daily figures were computed with other settings (or not yet); "
                 "these were computed from the readings now. The service stores them again when "
                 "it next starts.\n";
  }
  const auto conversion = stats::Conversion::make(config->units, flow, volume);
  SiteConfig site_copy = *site;
  return Report{std::move(*config), std::move(site_copy), std::move(*reader), *from, *to,
                conversion};
}

std::optional<std::vector<daily::DayFigures>> report_days(Report& report) {
  auto days = report.reader.days(report.from, report.to);
  if (!days) {
    std::cerr << days.error().message << '\n';
    return std::nullopt;
  }
  return std::move(*days);
}

std::string site_title(const SiteConfig& site) {
  return site.name == site.id ? site.id : fmt::format("{} ({})", site.id, site.name);
}

std::string local_time_of_day(std::int64_t time_ms, const TimeZone& zone) {
  const std::int64_t seconds = time_ms >= 0 ? time_ms / 1000 : -((-time_ms + 999) / 1000);
  const auto civil =
      cctz::convert(cctz::time_point<cctz::seconds>(cctz::seconds(seconds)), zone.cctz_zone());
  return fmt::format("{:02d}:{:02d}:{:02d}", civil.hour(), civil.minute(), civil.second());
}

}  // namespace stagewell::cli
