// `stagewell stats`: totals by month, calendar year and water year, the flow-duration curve, the
// annual minimum 7-day mean and the annual peak of one site (definitions in statistics.hpp).
#include <cctz/time_zone.h>
#include <fmt/format.h>

#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "report.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

struct StatsOptions {
  ReportOptions report;
  bool json = false;
};

const char* kMonthNames[] = {"January", "February", "March",     "April",   "May",      "June",
                             "July",    "August",   "September", "October", "November", "December"};

nlohmann::json optional_number(std::optional<double> value) {
  return value ? json_number(*value) : nlohmann::json(nullptr);
}

std::string local_time(std::int64_t time_ms, const TimeZone& zone) {
  const std::int64_t seconds = time_ms >= 0 ? time_ms / 1000 : -((-time_ms + 999) / 1000);
  const auto civil =
      cctz::convert(cctz::time_point<cctz::seconds>(cctz::seconds(seconds)), zone.cctz_zone());
  return fmt::format("{:04d}-{:02d}-{:02d} {:02d}:{:02d}", civil.year(), civil.month(), civil.day(),
                     civil.hour(), civil.minute());
}

nlohmann::json period_json(const stats::PeriodTotal& p, const stats::Conversion& u) {
  return {
      {"period", p.label},
      {"first_day", daily::format_day(p.first)},
      {"last_day", daily::format_day(p.last)},
      {"volume", json_number(p.volume * u.volume_factor)},
      {"mean_discharge", optional_number(u.flow_of(p.mean_discharge))},
      {"coverage", json_number(p.coverage())},
      {"days_with_figures", p.days_with_figures},
      {"min_7day_mean", optional_number(u.flow_of(p.min_7day_mean))},
      {"min_7day_first_day",
       p.min_7day_first ? nlohmann::json(daily::format_day(*p.min_7day_first)) : nullptr},
      {"peak_discharge", optional_number(u.flow_of(p.peak_discharge))},
      {"peak_time", p.peak_time_ms ? nlohmann::json(format_timestamp_utc(*p.peak_time_ms))
                                   : nlohmann::json(nullptr)},
  };
}

struct Computed {
  std::vector<stats::PeriodTotal> months;
  std::vector<stats::PeriodTotal> years;
  std::vector<stats::PeriodTotal> water_years;
  stats::FlowDuration duration;
};

void print_json(const Report& r, const Computed& c) {
  const auto& u = r.units;
  nlohmann::json out = {
      {"site", r.site.id},
      {"timezone", r.config.timezone},
      {"from", daily::format_day(r.from)},
      {"to", daily::format_day(r.to)},
      {"flow_units", std::string(units::ucum(u.flow))},
      {"volume_units", std::string(units::ucum(u.volume))},
      {"water_year_start_month", r.config.daily.water_year_start_month},
      {"stored", !r.reader.stale()},
  };
  for (const auto& [key, periods] :
       {std::pair{"months", &c.months}, std::pair{"calendar_years", &c.years},
        std::pair{"water_years", &c.water_years}}) {
    out[key] = nlohmann::json::array();
    for (const auto& p : *periods) out[key].push_back(period_json(p, u));
  }
  nlohmann::json exceeded = nlohmann::json::array();
  for (std::size_t k = 0; k < stats::kReportedPercents.size(); ++k) {
    exceeded.push_back({{"percent", static_cast<int>(stats::kReportedPercents[k])},
                        {"discharge", optional_number(u.flow_of(c.duration.exceeded[k]))}});
  }
  nlohmann::json curve = nlohmann::json::array();
  for (const auto& point : c.duration.curve) {
    curve.push_back({{"day", daily::format_day(point.day)},
                     {"mean_discharge", json_number(point.mean_discharge * u.flow_factor)},
                     {"exceedance", json_number(point.exceedance)}});
  }
  out["flow_duration"] = {{"days", c.duration.curve.size()},
                          {"days_left_out", c.duration.days_left_out},
                          {"exceeded", exceeded},
                          {"curve", curve}};
  std::cout << out.dump(2) << '\n';
}

void print_periods(const Report& r, const std::string& heading,
                   const std::vector<stats::PeriodTotal>& periods, bool low_flow) {
  const auto& u = r.units;
  const auto flow = units::symbol(u.flow);
  const auto shown = [](std::optional<double> v) { return v ? format_number(*v) : "-"; };
  std::cout << '\n' << heading << '\n';
  std::cout << fmt::format("{:<8} {:>13} {:>12} {:>8}", "period",
                           fmt::format("volume {}", units::symbol(u.volume)),
                           fmt::format("mean {}", flow), "covered");
  if (low_flow)
    std::cout << fmt::format(" {:>14} {:>10}", fmt::format("7-day min {}", flow), "from");
  std::cout << fmt::format(" {:>12}  {}\n", fmt::format("peak {}", flow), "peak at (local)");
  for (const auto& p : periods) {
    std::cout << fmt::format("{:<8} {:>13} {:>12} {:>7.1f}%", p.label,
                             format_number(p.volume * u.volume_factor),
                             shown(u.flow_of(p.mean_discharge)), 100.0 * p.coverage());
    if (low_flow) {
      std::cout << fmt::format(" {:>14} {:>10}", shown(u.flow_of(p.min_7day_mean)),
                               p.min_7day_first ? daily::format_day(*p.min_7day_first) : "-");
    }
    std::cout << fmt::format(
        " {:>12}  {}\n", shown(u.flow_of(p.peak_discharge)),
        p.peak_time_ms ? local_time(*p.peak_time_ms, r.reader.calendar().zone()) : "-");
  }
}

void print_text(const Report& r, const Computed& c) {
  const auto& u = r.units;
  std::cout << fmt::format("{}: statistics {} to {}, days in {}\n", site_title(r.site),
                           daily::format_day(r.from), daily::format_day(r.to),
                           r.reader.calendar().zone().name());
  print_periods(r, "Months", c.months, false);
  print_periods(r, "Calendar years", c.years, true);
  print_periods(r,
                fmt::format("Water years (from 1 {}; named by the year they end in)",
                            kMonthNames[r.config.daily.water_year_start_month - 1]),
                c.water_years, true);
  std::cout << fmt::format(
      "\nFlow duration: daily means of {} complete days ({} days with missing time or no figures left out)\n",
      c.duration.curve.size(), c.duration.days_left_out);
  for (std::size_t k = 0; k < stats::kReportedPercents.size(); ++k) {
    const auto q = u.flow_of(c.duration.exceeded[k]);
    std::cout << fmt::format("  exceeded {:>2}% of days  {:>12} {}\n", stats::kReportedPercents[k],
                             q ? format_number(*q) : "n/a", units::symbol(u.flow));
  }
  std::cout << "\nExceedance: Weibull plotting position m/(n+1), equal flows at their mean rank; "
               "values between\npositions interpolated linearly (n/a: the record is too short). "
               "7-day minimum: lowest mean of\n7 consecutive complete days within the year. "
               "Volumes cover only the covered time.\n";
  print_caution(std::cout);
}

int run_stats(const StatsOptions& options) {
  auto report = open_report(options.report);
  if (!report) return report.error();
  auto days = report_days(*report);
  if (!days) return kInvalidInput;
  const auto& calendar = report->reader.calendar();
  const int start = report->config.daily.water_year_start_month;
  Computed c;
  c.months =
      stats::totals(*days, report->from, report->to, stats::PeriodKind::month, start, calendar);
  c.years = stats::totals(*days, report->from, report->to, stats::PeriodKind::calendar_year, start,
                          calendar);
  c.water_years = stats::totals(*days, report->from, report->to, stats::PeriodKind::water_year,
                                start, calendar);
  c.duration = stats::flow_duration(*days, report->from, report->to);
  if (options.json) {
    print_json(*report, c);
  } else {
    print_text(*report, c);
  }
  return kOk;
}

}  // namespace

void add_stats_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "stats", "Monthly and annual totals, flow duration, 7-day low flow and peaks of one site");
  auto options = std::make_shared<StatsOptions>();
  add_report_options(*command, options->report, false);
  command->add_flag("--json", options->json, "JSON, full precision, with the whole duration curve");
  command->footer(
      "The water year starts in the month set by daily.water_year_start (October by default). "
      "Flow duration and 7-day minima use complete days only (coverage 100 %).");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_stats(*options); }; });
}

}  // namespace stagewell::cli
