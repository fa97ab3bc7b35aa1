// `stagewell recompute`: recompute a site's stored readings whose configuration version is not
// the one their period has now (after an edit of its history or corrections), on demand. The
// daemon does the same by itself when it loads a configuration; this command is for a database
// the daemon is not running on, or to see the summary.
#include <fmt/format.h>

#include <filesystem>
#include <iostream>
#include <limits>
#include <memory>

#include "commands.hpp"
#include "output_format.hpp"
#include "progress.hpp"
#include "stagewell/recomputation.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

// Readings per transaction: large enough that a step's fixed costs are small, small enough that
// another writer (the daemon) waits well under a second for the lock.
constexpr std::int64_t kStepReadings = 5000;

struct RecomputeOptions {
  std::string config_path;
  std::string site;
  std::string from;  // RFC 3339; empty: from the first reading
  std::string to;    // RFC 3339, excluded; empty: to the last reading
  bool quiet = false;
};

void print_summary(const RecomputationTotals& totals, units::System system) {
  const bool metric = system == units::System::metric;
  if (!totals.period_from_ms) {
    std::cout << "nothing to recompute: every reading was computed with its period's version\n";
    return;
  }
  std::cout << fmt::format("period: {} to {}\n", format_timestamp_utc(*totals.period_from_ms),
                           format_timestamp_utc(*totals.period_to_ms));
  std::cout << fmt::format("readings recomputed: {} ({} with a new depth, discharge or flags)\n",
                           totals.readings_recomputed, totals.readings_changed);
  std::cout << fmt::format("max discharge change: {} {}\n",
                           format_number(totals.max_discharge_change), metric ? "m^3/s" : "ft^3/s");
  std::cout << fmt::format("days refreshed: {} (max daily volume change: {} {})\n",
                           totals.days_refreshed, format_number(totals.max_daily_volume_change),
                           metric ? "m^3" : "ft^3");
  print_caution(std::cout);
}

int run_recompute(const RecomputeOptions& options) {
  auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  if (!find_site_or_report(*config, options.site)) return kInvalidInput;
  const auto from =
      parse_time_option(options.from, "--from", std::numeric_limits<std::int64_t>::min());
  const auto to = parse_time_option(options.to, "--to", std::numeric_limits<std::int64_t>::max());
  if (!from || !to) return kUsage;
  if (*to <= *from) {
    std::cerr << "--to must be after --from\n";
    return kUsage;
  }
  if (!std::filesystem::exists(config->database)) {
    std::cerr << "no database at " << config->database.string() << ": nothing to recompute\n";
    return kInvalidInput;
  }
  auto store = open_store_or_report(*config);
  if (!store) return kInvalidInput;
  // A store that ships logs what the recomputation changes, to send it again.
  if (auto tracked = store->shipping().track(config->warehouse.has_value()); !tracked) {
    std::cerr << "cannot open the database " << config->database.string() << ": "
              << tracked.error().message << '\n';
    return kInvalidInput;
  }
  auto planned = Recomputation::plan(*store, *config, options.site, system_now_ms(), *from, *to);
  if (!planned) {
    std::cerr << planned.error().message << '\n';
    return kInvalidInput;
  }
  catch_interrupts();
  ProgressDisplay progress(options.quiet);
  auto& work = **planned;
  while (!work.done()) {
    if (auto stepped = work.step(*store, kStepReadings); !stepped) {
      std::cerr << "\nrecomputation failed: " << stepped.error().message
                << " (what was committed stays; run again to finish)\n";
      return kInvalidInput;
    }
    const auto& totals = work.totals();
    progress.update(options.site, totals.readings_walked, totals.readings_in_period, "readings",
                    fmt::format("{} readings changed", totals.readings_changed), work.done());
    if (work.done()) progress.end_line();
    if (interrupted_by() != 0 && !work.done()) {
      std::cerr << "\ninterrupted; committed steps stay; run again to finish\n";
      print_summary(work.totals(), config->units);
      return 128 + interrupted_by();
    }
  }
  print_summary(work.totals(), config->units);
  return kOk;
}

}  // namespace

void add_recompute_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "recompute",
      "Recompute a site's stored readings after its history or corrections were edited");
  command->alias("reprocess");  // its first name: scripts that use it keep working
  auto options = std::make_shared<RecomputeOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site, "The site to recompute")->required();
  command->add_option("--from", options->from,
                      "Only readings at or after this RFC 3339 time (e.g. 2025-06-01T00:00:00Z)");
  command->add_option("--to", options->to, "Only readings before this RFC 3339 time");
  command->add_flag("-q,--quiet", options->quiet, "No progress display");
  command->footer(
      "Recomputes the readings whose stored configuration version differs from the one their "
      "period has in the configuration (changes and corrections), in transactions of 5000 "
      "readings, and refreshes the daily figures of the days they touch. Running it again finds "
      "nothing to do. Each run that recomputes something adds a row to the `recomputations` view.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_recompute(*options); }; });
}

}  // namespace stagewell::cli
