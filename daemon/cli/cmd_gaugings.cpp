// `stagewell gaugings import` (field measurements of discharge from CSV into the database) and
// `stagewell gaugings list` (each with the discharge the configuration computes at its stage).
// The work is the library's (gauging_csv.hpp, gaugings.hpp); this file wires and prints.
#include <fmt/format.h>

#include <filesystem>
#include <fstream>
#include <iostream>
#include <limits>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <sstream>

#include "commands.hpp"
#include "gaugings_support.hpp"
#include "output_format.hpp"
#include "stagewell/gauging_csv.hpp"
#include "stagewell/gaugings.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

// Default uncertainty of a gauging whose line has none, percent: a typical figure for a
// current-meter or acoustic gauging made with care (common practice; stated in the docs).
constexpr double kDefaultUncertaintyPercent = 5.0;
// The largest gaugings file read: a field sheet of a lifetime is far smaller.
constexpr std::uintmax_t kMaxCsvBytes = 64 * 1024 * 1024;

struct ImportOptions {
  std::string config_path;
  std::string csv_path;
  std::string flow_units;
  double uncertainty = kDefaultUncertaintyPercent;
};

struct ListOptions {
  std::string config_path;
  std::string site;
  std::string from;
  std::string to;
  std::string flow_units;
  bool json = false;
};

std::optional<std::string> read_file_or_report(const std::string& path) {
  std::error_code error;
  const auto size = std::filesystem::file_size(path, error);
  if (error) {
    std::cerr << "cannot read " << path << ": " << error.message() << '\n';
    return std::nullopt;
  }
  if (size > kMaxCsvBytes) {
    std::cerr << fmt::format("{}: {} bytes is more than a gaugings file may hold ({} bytes)\n",
                             path, size, kMaxCsvBytes);
    return std::nullopt;
  }
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  if (!in && !in.eof()) {
    std::cerr << "cannot read " << path << '\n';
    return std::nullopt;
  }
  return text.str();
}

int run_import(const ImportOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const auto flow_unit = flow_unit_or_report(options.flow_units, config->units);
  if (!flow_unit) return kUsage;
  if (!(options.uncertainty > 0.0 && options.uncertainty <= 100.0)) {
    std::cerr << "--uncertainty must be a percentage greater than 0 and at most 100\n";
    return kUsage;
  }
  const auto text = read_file_or_report(options.csv_path);
  if (!text) return kInvalidInput;
  const GaugingCsvOptions csv_options{
      .known_site = [&](std::string_view id) { return config->find_site(id) != nullptr; },
      // A written discharge in flow_unit, kept in the configuration's unit.
      .discharge_factor = 1.0 / flow_in(1.0, config->units, *flow_unit)};
  const auto parsed = parse_gaugings_csv(*text, csv_options);
  if (!parsed) {
    std::cerr << options.csv_path << ": " << parsed.error().message << '\n';
    return kInvalidInput;
  }
  auto store = open_store_or_report(*config);
  if (!store) return kInvalidInput;

  std::map<std::string, std::vector<GaugingLine>> by_site;
  for (const auto& line : parsed->gaugings) by_site[line.site].push_back(line);
  std::vector<GaugingLineError> refused = parsed->errors;
  std::size_t stored = 0, replaced = 0, interpolated = 0;
  for (const auto& [site_id, lines] : by_site) {
    auto site = open_site_or_report(*store, *config, site_id);
    if (!site) return kInvalidInput;
    auto imported = import_gaugings(*store, site->history, site->key, lines, options.uncertainty,
                                    system_now_ms());
    if (!imported) {
      std::cerr << "site " << site_id << ": cannot store its gaugings: " << imported.error().message
                << " (none of this site's were stored)\n";
      return kInvalidInput;
    }
    for (const auto& result : *imported) {
      if (result.refused) {
        refused.push_back({result.line_number, *result.refused});
        continue;
      }
      ++stored;
      replaced += result.replaced ? 1 : 0;
      interpolated += result.stage_interpolated ? 1 : 0;
    }
    if (auto refreshed = refresh_gaugings(*store, site->history, site->key,
                                          std::numeric_limits<std::int64_t>::min(),
                                          std::numeric_limits<std::int64_t>::max());
        !refreshed) {
      std::cerr << "site " << site_id << ": " << refreshed.error().message << '\n';
      return kInvalidInput;
    }
  }
  std::sort(refused.begin(), refused.end(),
            [](const auto& a, const auto& b) { return a.line_number < b.line_number; });
  for (const auto& error : refused) {
    std::cerr << fmt::format("{}:{}: {}\n", options.csv_path, error.line_number, error.reason);
  }
  std::cout << fmt::format(
      "gaugings stored: {} ({} replacing stored ones, {} with the stage interpolated from the "
      "stored readings); refused: {}\n",
      stored, replaced, interpolated, refused.size());
  if (stored > 0) print_caution(std::cout);
  return refused.empty() ? kOk : kInvalidInput;
}

std::string text_or_dash(const std::optional<std::string>& text) {
  return text ? *text : std::string("-");
}

int run_list(const ListOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  if (!find_site_or_report(*config, options.site)) return kInvalidInput;
  const auto flow_unit = flow_unit_or_report(options.flow_units, config->units);
  if (!flow_unit) return kUsage;
  const auto from =
      parse_time_option(options.from, "--from", std::numeric_limits<std::int64_t>::min());
  const auto to = parse_time_option(options.to, "--to", std::numeric_limits<std::int64_t>::max());
  if (!from || !to) return kUsage;
  auto store = open_store_or_report(*config);
  if (!store) return kInvalidInput;
  auto site = open_site_or_report(*store, *config, options.site);
  if (!site) return kInvalidInput;
  if (auto refreshed = refresh_gaugings(*store, site->history, site->key, *from, *to); !refreshed) {
    std::cerr << refreshed.error().message << '\n';
    return kInvalidInput;
  }
  const auto rows = store->gaugings().view(site->key, *from, *to);
  if (!rows) {
    std::cerr << rows.error().message << '\n';
    return kInvalidInput;
  }
  const auto flow = [&](std::optional<double> value) -> std::optional<double> {
    if (!value) return std::nullopt;
    return flow_in(*value, config->units, *flow_unit);
  };
  const auto stage_unit = site->config->stage.units;
  if (options.json) {
    const auto number = [](std::optional<double> value) {
      return value ? json_number(*value) : nlohmann::json(nullptr);
    };
    const auto text = [](const std::optional<std::string>& value) {
      return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
    };
    nlohmann::json out = {{"site", options.site},
                          {"stage_unit", std::string(units::ucum(stage_unit))},
                          {"discharge_unit", std::string(units::ucum(*flow_unit))},
                          {"gaugings", nlohmann::json::array()}};
    for (const auto& row : *rows) {
      out["gaugings"].push_back({{"time", format_timestamp_utc(row.time_ms)},
                                 {"stage", json_number(row.stage)},
                                 {"measured", number(flow(row.measured))},
                                 {"computed", number(flow(row.computed))},
                                 {"difference_percent", number(row.difference_percent)},
                                 {"implied_roughness", number(row.implied_roughness)},
                                 {"method", text(row.method)},
                                 {"note", text(row.note)},
                                 {"version", text(row.version)}});
    }
    std::cout << out.dump(2) << '\n';
    return kOk;
  }
  if (rows->empty()) {
    std::cout << "no gaugings of " << options.site << " stored in that period\n";
    return kOk;
  }
  const auto q = units::symbol(*flow_unit);
  std::cout << fmt::format("{:<21} {:>10} {:>11} {:>11} {:>8} {:>9}  {}\n", "time (UTC)",
                           fmt::format("stage {}", units::symbol(stage_unit)),
                           fmt::format("measured {}", q), fmt::format("computed {}", q), "diff %",
                           "implied n", "method; note");
  const auto shown = [](std::optional<double> value, int digits = 4) {
    return value ? format_number(*value, digits) : std::string("-");
  };
  for (const auto& row : *rows) {
    std::string words = text_or_dash(row.method);
    if (row.note) words += "; " + *row.note;
    std::cout << fmt::format(
        "{:<21} {:>10} {:>11} {:>11} {:>8} {:>9}  {}\n", format_timestamp_utc(row.time_ms),
        format_number(row.stage), shown(flow(row.measured)), shown(flow(row.computed)),
        row.difference_percent ? fmt::format("{:+.1f}", *row.difference_percent) : std::string("-"),
        shown(row.implied_roughness, 3), words);
  }
  std::cout << "diff % = 100 (measured - computed) / computed; implied n: the main channel's "
               "Manning's n that would make computed equal measured.\n";
  print_caution(std::cout);
  return kOk;
}

}  // namespace

void add_gaugings_command(CLI::App& program, Action& chosen) {
  auto* gaugings = program.add_subcommand(
      "gaugings", "Field measurements of discharge: import them, list them against the rating");
  gaugings->require_subcommand(1);

  auto* import = gaugings->add_subcommand(
      "import",
      "Store gaugings from a CSV file (site,time,discharge[,stage][,method]"
      "[,uncertainty][,note])");
  auto import_options = std::make_shared<ImportOptions>();
  add_config_option(*import, import_options->config_path);
  import->add_option("csv", import_options->csv_path, "The CSV file of gaugings")->required();
  import->add_option("--flow-units", import_options->flow_units,
                     "Unit of the discharge column: " + units::flow_choices() +
                         " (any case; default: the configuration's, m3/s or ft3/s)");
  import
      ->add_option("--uncertainty", import_options->uncertainty,
                   "Uncertainty of a gauging whose line has none, percent of its discharge "
                   "(default 5)")
      ->check(decimal_number());
  import->footer(
      "Times are RFC 3339 with an offset; stage is in the site's stage units. A line without a "
      "stage takes the stage linearly interpolated between the stored readings around its time "
      "(each within the site's checks.max_gap), or is refused. Importing a gauging of the same "
      "site and time again replaces it. Bad lines are reported with their line number; the others "
      "are stored, and the exit status is 1 when any line was refused.");
  import->final_callback([&chosen, import_options] {
    chosen = [import_options] { return run_import(*import_options);
};
}  // namespace stagewell::cli
);

auto* list = gaugings->add_subcommand(
    "list", "A site's gaugings with the discharge computed at their stage and the difference");
auto list_options = std::make_shared<ListOptions>();
add_config_option(*list, list_options->config_path);
list->add_option("-s,--site", list_options->site, "Site id")->required();
list->add_option("--from", list_options->from,
                 "Only gaugings at or after this RFC 3339 time (e.g. 2025-06-01T00:00:00Z)");
list->add_option("--to", list_options->to, "Only gaugings at or before this RFC 3339 time");
list->add_option("--flow-units", list_options->flow_units,
                 "Discharge in: " + units::flow_choices() +
                     " (any case; default: the configuration's, m3/s or ft3/s)");
list->add_flag("--json", list_options->json,
               "One JSON object, full precision, units as UCUM codes (*_unit keys)");
list->footer(
    "Each gauging's computed discharge is that of the configuration version in force at its "
    "time, brought up to date with the configuration first. The same values are in the "
    "database's `gaugings` view.");
list->final_callback([&chosen, list_options] {
  chosen = [list_options] { return run_list(*list_options); };
});
}

}  // namespace stagewell::cli
