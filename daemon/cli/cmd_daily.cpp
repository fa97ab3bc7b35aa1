// `stagewell daily`: the daily figures of one site over a period, for people, as CSV or as JSON.
#include <fmt/format.h>

#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "report.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

struct DailyOptions {
  ReportOptions report;
  bool csv = false;
  bool json = false;
};

std::string flag_list(const daily::DayFigures& day) {
  std::string out;
  for (const auto& count : day.flag_counts) {
    out += fmt::format("{}{} {}", out.empty() ? "" : ", ", name(count.flag), count.readings);
  }
  return out;
}

nlohmann::json optional_number(std::optional<double> value) {
  return value ? json_number(*value) : nlohmann::json(nullptr);
}

nlohmann::json optional_time(std::optional<std::int64_t> time_ms) {
  return time_ms ? nlohmann::json(format_timestamp_utc(*time_ms)) : nlohmann::json(nullptr);
}

void print_json(const Report& report, const std::vector<daily::DayFigures>& days) {
  const auto& u = report.units;
  nlohmann::json out = {
      {"site", report.site.id},
      {"timezone", report.config.timezone},
      {"from", daily::format_day(report.from)},
      {"to", daily::format_day(report.to)},
      {"flow_units", std::string(units::ucum(u.flow))},
      {"volume_units", std::string(units::ucum(u.volume))},
      {"stored", !report.reader.stale()},
      {"days", nlohmann::json::array()},
  };
  for (const auto& day : days) {
    nlohmann::json flags = nlohmann::json::object();
    for (const auto& count : day.flag_counts) flags[std::string(name(count.flag))] = count.readings;
    out["days"].push_back({
        {"day", daily::format_day(day.day)},
        {"volume", optional_number(u.volume_of(day.volume))},
        {"mean_discharge", optional_number(u.flow_of(day.mean_discharge))},
        {"min_discharge", optional_number(u.flow_of(day.min_discharge))},
        {"min_time", optional_time(day.min_time_ms)},
        {"max_discharge", optional_number(u.flow_of(day.max_discharge))},
        {"max_time", optional_time(day.max_time_ms)},
        {"coverage", json_number(day.coverage)},
        {"readings", day.readings},
        {"flagged", day.flagged},
        {"flags", flags},
        {"volume_low", optional_number(u.volume_of(day.volume_low))},
        {"volume_high", optional_number(u.volume_of(day.volume_high))},
    });
  }
  std::cout << out.dump(2) << '\n';
}

std::string csv_number(std::optional<double> value) {
  return value ? fmt::format("{}", *value) : std::string();
}

void print_csv(const Report& report, const std::vector<daily::DayFigures>& days) {
  const auto& u = report.units;
  // Units as UCUM codes in the header, as in every CSV stagewell writes.
  const auto flow = units::ucum(u.flow);
  std::cout << fmt::format(
      "day,volume ({0}),mean_discharge ({1}),min_discharge ({1}),min_time,max_discharge ({1}),"
      "max_time,coverage,readings,flagged,flags,volume_low ({0}),volume_high ({0})\n",
      units::ucum(u.volume), flow);
  for (const auto& day : days) {
    std::string flags;
    for (const auto& count : day.flag_counts) {
      flags += fmt::format("{}{}={}", flags.empty() ? "" : " ", name(count.flag), count.readings);
    }
    std::cout << fmt::format(
        "{},{},{},{},{},{},{},{},{},{},{},{},{}\n", daily::format_day(day.day),
        csv_number(u.volume_of(day.volume)), csv_number(u.flow_of(day.mean_discharge)),
        csv_number(u.flow_of(day.min_discharge)),
        day.min_time_ms ? format_timestamp_utc(*day.min_time_ms) : "",
        csv_number(u.flow_of(day.max_discharge)),
        day.max_time_ms ? format_timestamp_utc(*day.max_time_ms) : "", day.coverage, day.readings,
        day.flagged, flags, csv_number(u.volume_of(day.volume_low)),
        csv_number(u.volume_of(day.volume_high)));
  }
}

void print_table(const Report& report, const std::vector<daily::DayFigures>& days) {
  const auto& u = report.units;
  const auto& zone = report.reader.calendar().zone();
  const auto volume = units::symbol(u.volume);
  const auto flow = units::symbol(u.flow);
  std::cout << fmt::format("{}: daily figures {} to {}, days in {}\n", site_title(report.site),
                           daily::format_day(report.from), daily::format_day(report.to),
                           zone.name());
  std::cout << fmt::format("{:<10} {:>12} {:>11} {:>11} {:>8} {:>11} {:>8} {:>8} {:>8} {:>7}  {}\n",
                           "day", fmt::format("volume {}", volume), fmt::format("mean {}", flow),
                           fmt::format("min {}", flow), "at", fmt::format("max {}", flow), "at",
                           "covered", "readings", "flagged", "flags");
  const auto shown = [](std::optional<double> v) { return v ? format_number(*v) : "-"; };
  const auto at = [&](std::optional<std::int64_t> t) {
    return t ? local_time_of_day(*t, zone) : std::string("-");
  };
  auto next = days.begin();
  for (daily::Day day = report.from; day <= report.to; ++day) {
    if (next == days.end() || next->day != day) {
      std::cout << fmt::format("{:<10} {:>12}\n", daily::format_day(day), "no readings");
      continue;
    }
    const auto& d = *next++;
    std::cout << fmt::format(
        "{:<10} {:>12} {:>11} {:>11} {:>8} {:>11} {:>8} {:>7.1f}% {:>8} {:>7}  {}\n",
        daily::format_day(d.day), shown(u.volume_of(d.volume)), shown(u.flow_of(d.mean_discharge)),
        shown(u.flow_of(d.min_discharge)), at(d.min_time_ms), shown(u.flow_of(d.max_discharge)),
        at(d.max_time_ms), 100.0 * d.coverage, d.readings, d.flagged, flag_list(d));
  }
  std::cout << fmt::format(
      "Times are local ({}). Volume and mean cover only the covered part of each day.\n",
      zone.name());
  print_caution(std::cout);
}

int run_daily(const DailyOptions& options) {
  auto report = open_report(options.report);
  if (!report) return report.error();
  auto days = report_days(*report);
  if (!days) return kInvalidInput;
  if (options.json) {
    print_json(*report, *days);
  } else if (options.csv) {
    print_csv(*report, *days);
  } else {
    print_table(*report, *days);
  }
  return kOk;
}

}  // namespace

void add_daily_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "daily", "Daily volume, mean, lowest and highest discharge and coverage of one site");
  auto options = std::make_shared<DailyOptions>();
  add_report_options(*command, options->report, true);
  auto* csv = command->add_flag("--csv", options->csv, "CSV with a header line, full precision");
  command->add_flag("--json", options->json, "JSON, full precision")->excludes(csv);
  command->footer(
      "Days are local calendar days of the configuration's timezone. Only days with readings or "
      "integrated time have figures; CSV and JSON list only those. Times in CSV and JSON are RFC "
      "3339 UTC, as in the `daily` view.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_daily(*options); }; });
}

}  // namespace stagewell::cli
