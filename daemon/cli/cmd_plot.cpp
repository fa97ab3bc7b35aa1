// `stagewell plot`: a hydrograph or a flow-duration curve of one site as an SVG file.
#include <fmt/format.h>

#include <cstring>
#include <fstream>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "report.hpp"
#include "stagewell/plot.hpp"

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

int run_plot(const PlotOptions& options) {
  auto report = open_report(options.report);
  if (!report) return report.error();
  const std::string period =
      fmt::format("{} to {} ({})", daily::format_day(report->from), daily::format_day(report->to),
                  report->reader.calendar().zone().name());
  auto svg = options.kind == "duration" ? duration(*report, period) : hydrograph(*report, period);
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
                           options.kind == "duration" ? "flow-duration curve" : "hydrograph",
                           report->site.id, period);
  print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_plot_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "plot", "Draw a hydrograph or a flow-duration curve of one site as an SVG file");
  auto options = std::make_shared<PlotOptions>();
  add_report_options(*command, options->report, true);
  command->add_option("-o,--out", options->out, "The SVG file to write")->required();
  command
      ->add_option("--kind", options->kind,
                   "hydrograph: discharge and stage over time (default); duration: "
                   "flow-duration curve of the daily means")
      ->check(CLI::IsMember({"hydrograph", "duration"}));
  command->footer(
      "Flagged readings are marked by how the daily figures treat them: a cross (left out, time "
      "missing), a triangle (left out, bridged) or a circle (used). --volume-units has no effect "
      "on a plot.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_plot(*options); }; });
}

}  // namespace stagewell::cli
