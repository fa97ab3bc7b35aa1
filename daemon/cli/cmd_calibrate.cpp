// `stagewell calibrate`: the Manning's n that best matches a site's stored gaugings (one factor
// on every subsection's n, calibration.hpp), with its 95 % interval, and a `changes:` entry to
// paste into the configuration. It never edits the configuration.
#include <fmt/format.h>

#include <iostream>
#include <limits>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "gaugings_support.hpp"
#include "output_format.hpp"
#include "stagewell/calibration.hpp"
#include "stagewell/gaugings.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

struct CalibrateOptions {
  std::string config_path;
  std::string site;
  std::string from;
  std::string to;
  bool json = false;
};

struct LeftOut {
  std::int64_t time_ms = 0;
  std::string reason;
};

int run_calibrate(const CalibrateOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  if (!find_site_or_report(*config, options.site)) return kInvalidInput;
  const auto from =
      parse_time_option(options.from, "--from", std::numeric_limits<std::int64_t>::min());
  const auto to = parse_time_option(options.to, "--to", std::numeric_limits<std::int64_t>::max());
  if (!from || !to) return kUsage;
  if (*to < *from) {
    std::cerr << "--to must not be before --from\n";
    return kUsage;
  }
  auto store = open_store_or_report(*config);
  if (!store) return kInvalidInput;
  auto site = open_site_or_report(*store, *config, options.site);
  if (!site) return kInvalidInput;
  auto gaugings = refresh_gaugings(*store, site->history, site->key, *from, *to);
  if (!gaugings) {
    std::cerr << gaugings.error().message << '\n';
    return kInvalidInput;
  }
  std::vector<CalibrationPoint> used;
  std::vector<LeftOut> left_out;
  for (const auto& gauging : *gaugings) {
    if (auto why = calibration_exclusion(gauging.record, gauging.flags)) {
      left_out.push_back({gauging.record.time_ms, std::move(*why)});
    } else {
      used.push_back({gauging.record.time_ms, gauging.record.measured, *gauging.record.computed});
    }
  }
  const auto fit = fit_roughness(used);
  if (!fit) {
    std::cerr << fmt::format("site {}: {} ({} gauging{} in the period, {} left out)\n",
                             options.site, fit.error().message, gaugings->size(),
                             gaugings->size() == 1 ? "" : "s", left_out.size());
    for (const auto& out : left_out) {
      std::cerr << fmt::format("  left out {}: {}\n", format_timestamp_utc(out.time_ms),
                               out.reason);
    }
    return kInvalidInput;
  }

  // Today's roughness, scaled: what the configuration would say from the first gauging on.
  const SiteConfig& today = site->config->version_at(system_now_ms());
  const double roughness = main_roughness(today);
  std::vector<double> scaled;
  for (double n : today.roughness) scaled.push_back(n * fit->factor);
  const std::string change = roughness_change_yaml(used.front().time_ms, scaled);
  std::vector<std::string> warnings;
  for (double n : scaled) {
    if (n < kMinRoughness || n > kMaxRoughness) {
      warnings.push_back(fmt::format(
          "a fitted n of {} is outside what a configuration accepts ({} to {}): the gaugings or "
          "the section, slope or stage settings need a look before any roughness is changed",
          format_number(n), kMinRoughness, kMaxRoughness));
      break;
    }
  }
  if (fit->count < 2 * kMinCalibrationPoints) {
    warnings.push_back(
        fmt::format("only {} gaugings: the interval is wide, and they may not span "
                    "the stages that matter",
                    fit->count));
  }
  const auto flow = units::default_flow(config->units);

  if (options.json) {
    nlohmann::json out = {
        {"site", options.site},
        {"count", fit->count},
        {"factor", json_number(fit->factor)},
        {"factor_low", json_number(fit->factor_low)},
        {"factor_high", json_number(fit->factor_high)},
        {"roughness", json_number(roughness)},
        {"roughness_fit", json_number(roughness * fit->factor)},
        {"roughness_low", json_number(roughness * fit->factor_low)},
        {"roughness_high", json_number(roughness * fit->factor_high)},
        {"rms_difference_percent_before", json_number(fit->rms_difference_percent_before)},
        {"rms_difference_percent_after", json_number(fit->rms_difference_percent_after)},
        {"discharge_unit", std::string(units::ucum(flow))},
        {"used", nlohmann::json::array()},
        {"left_out", nlohmann::json::array()},
        {"change", change},
        {"warnings", warnings},
    };
    for (const auto& point : used) {
      out["used"].push_back({{"time", format_timestamp_utc(point.time_ms)},
                             {"measured", json_number(point.measured)},
                             {"computed", json_number(point.computed)}});
    }
    for (const auto& skipped : left_out) {
      out["left_out"].push_back(
          {{"time", format_timestamp_utc(skipped.time_ms)}, {"reason", skipped.reason}});
    }
    std::cout << out.dump(2) << '\n';
    return kOk;
  }

  std::cout << fmt::format("{} ({}): roughness from {} gauging{} ({} left out)\n", site->config->id,
                           site->config->name, fit->count, fit->count == 1 ? "" : "s",
                           left_out.size());
  std::cout << fmt::format("  main channel's Manning's n now   {}\n", format_number(roughness));
  std::cout << fmt::format("  fitted n                         {}   (95 % interval {} to {})\n",
                           format_number(roughness * fit->factor),
                           format_number(roughness * fit->factor_low),
                           format_number(roughness * fit->factor_high));
  std::cout << fmt::format("  factor on every subsection's n   {}\n", format_number(fit->factor));
  std::cout << fmt::format(
      "  RMS of 100 (measured - computed) / computed: {} % before, {} % after\n",
      format_number(fit->rms_difference_percent_before, 3),
      format_number(fit->rms_difference_percent_after, 3));
  std::cout << fmt::format(
      "  discharges in {}; the interval is Student's t on the mean of "
      "ln(computed / measured)\n",
      units::symbol(flow));
  for (const auto& skipped : left_out) {
    std::cout << fmt::format("  left out {}: {}\n", format_timestamp_utc(skipped.time_ms),
                             skipped.reason);
  }
  for (const auto& warning : warnings) std::cout << "  warning: " << warning << '\n';
  std::cout << "\nTo use it, add under the site's `changes:` (the configuration is not edited):\n"
            << change << '\n';
  print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_calibrate_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "calibrate", "Fit Manning's n to a site's stored gaugings (one factor on every n)");
  auto options = std::make_shared<CalibrateOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site, "Site id")->required();
  command->add_option("--from", options->from,
                      "Only gaugings at or after this RFC 3339 time (e.g. 2025-06-01T00:00:00Z)");
  command->add_option("--to", options->to, "Only gaugings at or before this RFC 3339 time");
  command->add_flag("--json", options->json,
                    "One JSON object, full precision, units as UCUM codes (*_unit keys)");
  command->footer(
      "Uses the gaugings with a computed and a measured discharge above 0 whose stage is within "
      "the site's range (not out_of_range, above_section, surcharged or below_zero_flow); at "
      "least 3 are needed. The fitted factor f is the geometric mean of computed / measured; "
      "every subsection's n times f matches the gaugings best in the least-squares sense on "
      "logarithms. Prints a `changes:` entry to paste; never edits the configuration.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_calibrate(*options); }; });
}

}  // namespace stagewell::cli
