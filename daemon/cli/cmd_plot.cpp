// `stagewell plot`: a hydrograph, a flow-duration curve or a rating with its gaugings, of one site
// as an SVG file.
#include <fmt/format.h>

#include <cstring>
#include <fstream>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "gaugings_support.hpp"
#include "report.hpp"
#include "stagewell/gaugings.hpp"
#include "stagewell/plot.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

struct PlotOptions {
  ReportOptions report;
  std::string out;
  std::string kind = "hydrograph";
};

Result<std::string> hydrograph(Report& r, const std::string& period) {
  const auto& calendar = r.reader.calendar();
  const std::int64_t from_ms = calendar.start_ms(r.from);
  const std::int64_t to_ms = calendar.start_ms(r.to + 1);
  std::vector<plot::PlotReading> readings;
  if (const auto site = r.reader.site()) {
    auto read = r.reader.store().readings().plot_readings(*site, from_ms, to_ms);
    if (!read) return std::unexpected(read.error());
    readings = std::move(*read);
  }
  plot::HydrographSpec spec;
  spec.title = site_title(r.site);
  spec.period = period;
  spec.from_ms = from_ms;
  spec.to_ms = to_ms;
  spec.zone = calendar.zone();
  spec.max_gap_ms = r.reader.rules().max_gap_ms;
  spec.excluded = r.reader.rules().excluded;
  spec.bridged = r.reader.rules().bridged;
  spec.units = r.units;
  spec.stage_symbol = std::string(units::symbol(r.site.stage.units));
  return plot::hydrograph_svg(readings, spec);
}

Result<std::string> duration(Report& r, const std::string& period) {
  auto days = r.reader.days(r.from, r.to);
  if (!days) return std::unexpected(days.error());
  plot::DurationSpec spec;
  spec.title = site_title(r.site);
  spec.period = period;
  spec.units = r.units;
  return plot::duration_svg(stats::flow_duration(*days, r.from, r.to), spec);
}

// Stage against discharge of the version in force now, with the gaugings of the period.
Result<std::string> rating(Report& r, const std::string& period) {
  auto store = open_store_or_report(r.config);
  if (!store) return fail(ErrorKind::invalid_argument, "no rating plot without the database");
  auto site = open_site_or_report(*store, r.config, r.site.id);
  if (!site) return fail(ErrorKind::invalid_argument, "no rating plot without the site's history");
  const auto& calendar = r.reader.calendar();
  auto gaugings = refresh_gaugings(*store, site->history, site->key, calendar.start_ms(r.from),
                                   calendar.start_ms(r.to + 1) - 1);
  if (!gaugings) return std::unexpected(gaugings.error());
  const std::int64_t now_ms = system_now_ms();
  constexpr std::size_t kCurvePoints = 201;
  const auto curve = rating_curve(site->history, r.config.units, now_ms, kCurvePoints);
  std::vector<plot::RatingGauging> points;
  for (const auto& g : *gaugings) {
    const auto& record = g.record;
    std::optional<double> difference;
    if (record.computed && *record.computed > 0.0) {
      difference = 100.0 * (record.measured - *record.computed) / *record.computed;
    }
    points.push_back({record.stage, record.measured, difference});
  }
  plot::RatingSpec spec;
  spec.title = site_title(r.site);
  spec.subtitle =
      fmt::format("Rating in force at {}; gaugings of {}", format_timestamp_utc(now_ms), period);
  spec.units = r.units;
  spec.stage_symbol = std::string(units::symbol(r.site.stage.units));
  spec.band_note =
      "the band of the computed discharge (about 95 %) from the site's uncertainties of "
      "roughness, slope and stage";
  return plot::rating_svg(curve, points, spec);
}

int run_plot(const PlotOptions& options) {
  auto report = open_report(options.report);
  if (!report) return report.error();
  const std::string period =
      fmt::format("{} to {} ({})", daily::format_day(report->from), daily::format_day(report->to),
                  report->reader.calendar().zone().name());
  auto svg = options.kind == "duration" ? duration(*report, period)
             : options.kind == "rating" ? rating(*report, period)
                                        : hydrograph(*report, period);
  if (!svg) {
    std::cerr << svg.error().message << '\n';
    return kInvalidInput;
  }
  std::ofstream out(options.out, std::ios::binary | std::ios::trunc);
  out << *svg;
  out.close();
  if (!out) {
    std::cerr << fmt::format("cannot write {}: {}\n", options.out, std::strerror(errno));
    return kInvalidInput;
  }
  std::cout << fmt::format("wrote {}: {} of {}, {}\n", options.out,
                           options.kind == "duration" ? "flow-duration curve"
                           : options.kind == "rating" ? "rating with gaugings"
                                                      : "hydrograph",
                           report->site.id, period);
  print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_plot_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "plot",
      "Draw a hydrograph, a flow-duration curve or a rating with gaugings of one site as SVG");
  auto options = std::make_shared<PlotOptions>();
  add_report_options(*command, options->report, true);
  command->add_option("-o,--out", options->out, "The SVG file to write")->required();
  command
      ->add_option("--kind", options->kind,
                   "hydrograph: discharge and stage over time (default); duration: "
                   "flow-duration curve of the daily means; rating: stage against discharge of "
                   "the configuration in force now, with the period's gaugings and their "
                   "differences")
      ->check(CLI::IsMember({"hydrograph", "duration", "rating"}));
  command->footer(
      "A rating plot's gaugings are those stored (stagewell gaugings import) in the period's "
      "days. Flagged readings are marked by how the daily figures treat them: a cross (left out, "
      "time "
      "missing), a triangle (left out, bridged) or a circle (used). --volume-units has no effect "
      "on a plot.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_plot(*options); }; });
}

}  // namespace stagewell::cli
