// `stagewell warehouse check|ship`: the PostgreSQL warehouse this store ships to
// (docs/warehouse.md). `check` changes nothing anywhere; `ship` sends what is pending once, for a
// store the service is not running on.
#include <fmt/format.h>

#include <filesystem>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "progress.hpp"
#include "stagewell/service_lock.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"
#include "stagewell/warehouse.hpp"

namespace stagewell::cli {
namespace {

struct WarehouseOptions {
  std::string config_path;
  bool json = false;
  bool quiet = false;
};

std::optional<Config> warehouse_config(const std::string& path) {
  auto config = load_config_or_report(path);
  if (!config) return std::nullopt;
  if (!config->warehouse) {
    std::cerr << config->file.string()
              << ": no `warehouse:` section; nothing is shipped (see docs/warehouse.md)\n";
    return std::nullopt;
  }
  return config;
}

struct LocalLag {
  std::optional<std::int64_t> readings;
  std::optional<std::int64_t> rows;
  std::optional<std::int64_t> last_shipped_ms;
  std::optional<std::string> error;
};

LocalLag local_lag(const Config& config) {
  LocalLag lag;
  if (!std::filesystem::exists(config.database)) {
    lag.readings = 0;
    lag.rows = 0;
    return lag;
  }
  auto store = Store::open_read_only(config.database);
  if (!store) {
    lag.error = fmt::format("cannot open the database {}: {}", config.database.string(),
                            store.error().message);
    return lag;
  }
  auto readings = store->shipping().lag_readings();
  auto rows = store->shipping().lag_rows();
  auto state = store->shipping().state();
  if (!readings || !rows || !state) {
    lag.error = "cannot read the shipping queue: " + (!readings ? readings.error()
                                                      : !rows   ? rows.error()
                                                                : state.error())
                                                         .message;
    return lag;
  }
  lag.readings = *readings;
  lag.rows = *rows;
  if (*state) lag.last_shipped_ms = (*state)->last_shipped_ms;
  return lag;
}

int run_check(const WarehouseOptions& options) {
  auto config = warehouse_config(options.config_path);
  if (!config) return kInvalidInput;
  const auto& spec = *config->warehouse;
  const auto lag = local_lag(*config);
  auto info = inspect_warehouse(spec);
  const bool current = info && info->schema_version.value_or(warehouse_schema_version()) ==
                                   warehouse_schema_version();
  const bool ok = info && current && !lag.error;
  std::optional<std::string> error;
  if (!info) {
    error = info.error().message;
  } else if (!current) {
    error = fmt::format("the warehouse schema is at version {}, this program's is {}",
                        *info->schema_version, warehouse_schema_version());
  } else if (lag.error) {
    error = lag.error;
  }
  if (options.json) {
    nlohmann::ordered_json out;
    out["connected"] = info.has_value();
    out["target"] = info ? nlohmann::ordered_json(info->target) : nullptr;
    out["server_version"] = info ? nlohmann::ordered_json(info->server_version) : nullptr;
    out["schema"] = spec.schema;
    out["schema_version"] =
        info && info->schema_version ? nlohmann::ordered_json(*info->schema_version) : nullptr;
    out["program_schema_version"] = warehouse_schema_version();
    out["plant"] = spec.plant;
    out["lag_readings"] = lag.readings ? nlohmann::ordered_json(*lag.readings) : nullptr;
    out["lag_rows"] = lag.rows ? nlohmann::ordered_json(*lag.rows) : nullptr;
    out["last_shipped"] = lag.last_shipped_ms
                              ? nlohmann::ordered_json(format_timestamp_utc(*lag.last_shipped_ms))
                              : nullptr;
    out["error"] = error ? nlohmann::ordered_json(*error) : nullptr;
    std::cout << out.dump(2) << '\n';
    return ok ? kOk : kInvalidInput;
  }
  if (info) {
    std::cout << fmt::format("warehouse:      {} (PostgreSQL {})\n", info->target,
                             info->server_version);
    std::cout << fmt::format(
        "schema:         {} at version {} (this program's: {})\n", spec.schema,
        info->schema_version ? std::to_string(*info->schema_version) : "none, not created yet",
        warehouse_schema_version());
  } else {
    std::cout << "warehouse:      not reachable\n";
  }
  std::cout << fmt::format("plant:          {}\n", spec.plant);
  if (lag.readings && lag.rows) {
    std::cout << fmt::format("still to ship:  {} readings, {} other rows\n", *lag.readings,
                             *lag.rows);
  }
  std::cout << fmt::format("last shipment:  {}\n", lag.last_shipped_ms
                                                       ? format_timestamp_utc(*lag.last_shipped_ms)
                                                       : std::string("none yet"));
  if (error) std::cerr << *error << '\n';
  return ok ? kOk : kInvalidInput;
}

int run_ship(const WarehouseOptions& options) {
  auto config = warehouse_config(options.config_path);
  if (!config) return kInvalidInput;
  if (!std::filesystem::exists(config->database)) {
    std::cerr << "no database at " << config->database.string() << ": nothing to ship\n";
    return kInvalidInput;
  }
  // The service ships by itself; two shippers of one store would race.
  auto lock = ServiceLock::acquire(config->database);
  if (!lock) {
    std::cerr << lock.error().message << "; it ships to the warehouse by itself\n";
    return kInvalidInput;
  }
  auto store = open_store_or_report(*config);
  if (!store) return kInvalidInput;
  if (auto tracked = store->shipping().track(true); !tracked) {
    std::cerr << tracked.error().message << '\n';
    return kInvalidInput;
  }
  catch_interrupts();
  Shipper shipper(*config->warehouse, *store);
  ProgressDisplay progress(options.quiet);
  std::int64_t readings = 0;
  std::int64_t rows = 0;
  std::optional<std::int64_t> total;
  for (;;) {
    auto step = shipper.step();
    if (!step) {
      progress.end_line();
      std::cerr << step.error().message << " (what was shipped stays; run again to go on)\n";
      return kInvalidInput;
    }
    if (!total) {
      // Counted once connected and paired: a new warehouse queues the whole record.
      auto lag = store->shipping().lag_readings();
      total = (lag ? *lag : 0) + static_cast<std::int64_t>(step->readings);
    }
    readings += static_cast<std::int64_t>(step->readings);
    rows += static_cast<std::int64_t>(step->rows);
    progress.update("shipped", readings, std::max(*total, readings), "readings",
                    fmt::format("{} other rows", rows), step->idle());
    if (step->idle()) break;
    if (interrupted_by() != 0) {
      progress.end_line();
      std::cerr << "interrupted; what was shipped stays; run again to go on\n";
      return 128 + interrupted_by();
    }
  }
  progress.end_line();
  std::cout << fmt::format("shipped {} readings and {} other rows to {} as plant '{}'\n", readings,
                           rows, shipper.target(), config->warehouse->plant);
  return kOk;
}

}  // namespace

void add_warehouse_command(CLI::App& program, Action& chosen) {
  auto* warehouse = program.add_subcommand(
      "warehouse", "The PostgreSQL warehouse the store ships to: check it, ship to it now");
  warehouse->require_subcommand(1);

  auto* check = warehouse->add_subcommand(
      "check", "Connect to the warehouse; report its schema version and what is still to ship");
  auto check_options = std::make_shared<WarehouseOptions>();
  add_config_option(*check, check_options->config_path);
  check->add_flag("--json", check_options->json, "One JSON object");
  check->footer(
      "Changes nothing, here or in the warehouse. The exit status is 0 when the warehouse answers "
      "and its schema is this program's (or not created yet), 1 otherwise. What is still to ship "
      "is read from the local database, so it is reported even when the warehouse cannot be "
      "reached.");
  check->final_callback(
      [&chosen, check_options] { chosen = [check_options] { return run_check(*check_options); }; });

  auto* ship = warehouse->add_subcommand(
      "ship",
      "Ship everything pending to the warehouse now, then stop (not while the service runs)");
  auto ship_options = std::make_shared<WarehouseOptions>();
  add_config_option(*ship, ship_options->config_path);
  ship->add_flag("-q,--quiet", ship_options->quiet, "No progress display");
  ship->footer(
      "Creates or migrates the warehouse's schema, then sends the readings, daily figures, alarms, "
      "rejected lines, configuration versions and site details not sent yet, in transactions of "
      "up to 10000 readings. Interrupted, it keeps what was shipped; run again to go on. The "
      "service (stagewelld) ships by itself; this is for a database it does not run on.");
  ship->final_callback(
      [&chosen, ship_options] { chosen = [ship_options] { return run_ship(*ship_options); }; });
}

}  // namespace stagewell::cli
