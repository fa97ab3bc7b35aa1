// The warehouse end of shipping (stagewell/warehouse.hpp).
#include <fmt/format.h>

#include <atomic>
#include <chrono>
#include <fstream>
#include <mutex>
#include <set>

#include "stagewell/store.hpp"
#include "stagewell/warehouse.hpp"
#include "warehouse/migrations.hpp"
#include "warehouse/pg.hpp"

namespace stagewell {
namespace {

std::int64_t now_ms() {
  return std::chrono::duration_cast<std::chrono::milliseconds>(
             std::chrono::system_clock::now().time_since_epoch())
      .count();
}

// A warehouse table: its columns after `plant`, in the order the store's rows carry them
// (shipping_queue.hpp), and how many of the first ones are its key.
struct TableShape {
  std::string_view name;
  std::vector<std::string_view> columns;
  std::size_t key_columns;
};

const TableShape kReadings{"readings",
                           {"site", "time_ms", "stage", "depth", "discharge", "flags", "version",
                            "discharge_low", "discharge_high", "discharge_jones"},
                           2};

const TableShape& shape_of(ShipTable table) {
  static const TableShape daily{
      "daily_figures",
      {"site", "day", "volume", "mean_discharge", "min_discharge", "min_time_ms", "max_discharge",
       "max_time_ms", "coverage", "readings", "flagged", "volume_low", "volume_high"},
      2};
  static const TableShape alarm{
      "alarm_events",
      {"alarm_id", "site", "kind", "raised_ms", "cleared_ms", "value", "threshold", "clear_value"},
      1};
  static const TableShape reject{
      "rejected_lines",
      {"reject_id", "source", "position", "raw", "raw_bytes", "reason", "received_ms"},
      1};
  static const TableShape version{
      "config_versions", {"config_id", "site", "config_json", "hash", "created_ms"}, 1};
  static const TableShape site{"site_settings",
                               {"site", "name", "time_zone", "stage_unit", "length_unit",
                                "discharge_unit", "volume_unit", "latitude", "longitude", "datum"},
                               1};
  switch (table) {
    case ShipTable::daily:
      return daily;
    case ShipTable::alarm:
      return alarm;
    case ShipTable::reject:
      return reject;
    case ShipTable::version:
      return version;
    case ShipTable::site:
      return site;
  }
  return site;
}

std::string joined(const std::vector<std::string_view>& names, std::size_t from, std::size_t to,
                   std::string_view prefix = "") {
  std::string out;
  for (std::size_t i = from; i < to; ++i) {
    if (!out.empty()) out += ", ";
    out += prefix;
    out += names[i];
  }
  return out;
}

std::string read_password(const std::filesystem::path& file) {
  std::ifstream in(file);
  std::string line;
  std::getline(in, line);
  if (!line.empty() && line.back() == '\r') line.pop_back();
  return line;
}

// The parameters libpq is given: sensible defaults, then the configured string (which may override
// them), then the password from its file.
Result<std::vector<std::pair<std::string, std::string>>> connection_params(
    const WarehouseSpec& spec) {
  std::vector<std::pair<std::string, std::string>> params{
      {"connect_timeout", "10"},   {"keepalives", "1"},
      {"keepalives_idle", "30"},   {"keepalives_interval", "10"},
      {"keepalives_count", "3"},   {"application_name", "stagewell " + spec.plant},
      {"dbname", spec.postgresql}, {"client_encoding", "UTF8"},
  };
  if (spec.password_file) {
    std::error_code error;
    if (!std::filesystem::is_regular_file(*spec.password_file, error)) {
      return fail(ErrorKind::not_found,
                  fmt::format("the warehouse's password file {} is not there (or not a file)",
                              spec.password_file->string()));
    }
    std::ifstream probe(*spec.password_file);
    if (!probe) {
      return fail(ErrorKind::io, fmt::format("cannot read the warehouse's password file {}",
                                             spec.password_file->string()));
    }
    params.emplace_back("password", read_password(*spec.password_file));
  }
  return params;
}

Result<pg::Connection> open_connection(const WarehouseSpec& spec) {
  auto params = connection_params(spec);
  if (!params) return std::unexpected(params.error());
  auto connection = pg::Connection::open(*params);
  if (!connection) {
    return fail(connection.error().kind,
                fmt::format("cannot connect to the warehouse: {}", connection.error().message));
  }
  return connection;
}

std::string server_version_text(int version) {
  return fmt::format("{}.{}", version / 10000, version % 10000);
}

Result<std::optional<int>> schema_version_of(pg::Connection& connection, std::string_view schema) {
  auto exists = connection.exec("SELECT to_regclass($1) IS NOT NULL",
                                {fmt::format("{}.schema_migrations", schema)});
  if (!exists) return std::unexpected(exists.error());
  if (pg::value(exists->get(), 0, 0) != "t") return std::optional<int>();
  auto max = connection.exec(fmt::format("SELECT max(version) FROM {}.schema_migrations", schema));
  if (!max) return std::unexpected(max.error());
  const auto value = pg::value(max->get(), 0, 0);
  if (!value) return std::optional<int>();
  return std::optional<int>(std::stoi(*value));
}

// Ends the transaction: COMMIT when `ok`, else ROLLBACK (whose own failure adds nothing).
Result<void> finish(pg::Connection& connection, Result<void> ok) {
  if (!ok) {
    (void)connection.exec("ROLLBACK");
    return ok;
  }
  auto committed = connection.exec("COMMIT");
  if (!committed) return std::unexpected(committed.error());
  return {};
}

Result<void> migrate(pg::Connection& connection, std::string_view schema) {
  const auto all = warehouse_detail::migrations();
  const int latest = all.back().version;
  for (;;) {
    if (auto begun = connection.exec("BEGIN"); !begun) return std::unexpected(begun.error());
    auto applied = [&]() -> Result<bool> {
      // One migrating service at a time, whichever plant.
      auto locked = connection.exec("SELECT pg_advisory_xact_lock(hashtext($1))",
                                    {fmt::format("stagewell migrations {}", schema)});
      if (!locked) return std::unexpected(locked.error());
      auto made = connection.exec(fmt::format(
          "CREATE SCHEMA IF NOT EXISTS {0}; "
          "CREATE TABLE IF NOT EXISTS {0}.schema_migrations (version integer PRIMARY KEY, "
          "name text NOT NULL, applied timestamptz NOT NULL DEFAULT now())",
          schema));
      if (!made) return std::unexpected(made.error());
      auto version = schema_version_of(connection, schema);
      if (!version) return std::unexpected(version.error());
      const int current = version->value_or(0);
      if (current > latest) {
        return fail(ErrorKind::invalid_argument,
                    fmt::format("the warehouse's schema {} is at version {}, newer than this "
                                "program's {}: upgrade stagewell here",
                                schema, current, latest));
      }
      if (current == latest) return false;
      const auto& next = all[static_cast<std::size_t>(current)];
      auto path = connection.exec(fmt::format("SET LOCAL search_path TO {}", schema));
      if (!path) return std::unexpected(path.error());
      auto ran = connection.exec(next.sql);
      if (!ran) {
        return fail(ran.error().kind, fmt::format("warehouse migration {} failed: {}", next.name,
                                                  ran.error().message));
      }
      auto recorded =
          connection.exec(fmt::format("INSERT INTO {}.schema_migrations (version, name) "
                                      "VALUES ($1, $2)",
                                      schema),
                          {std::to_string(next.version), std::string(next.name)});
      if (!recorded) return std::unexpected(recorded.error());
      return true;
    }();
    const bool more = applied && *applied;
    auto ended = finish(connection, applied ? Result<void>() : std::unexpected(applied.error()));
    if (!ended) return ended;
    if (!more) return {};
  }
}

void append_row(std::string& out, std::string_view plant, const ShipValues& values) {
  pg::append_copy_field(out, plant);
  for (const auto& value : values) {
    out += '\t';
    if (value) {
      pg::append_copy_field(out, *value);
    } else {
      out += "\\N";
    }
  }
  out += '\n';
}

}  // namespace

int warehouse_schema_version() { return warehouse_detail::migrations().back().version; }

Result<WarehouseInfo> inspect_warehouse(const WarehouseSpec& spec) {
  auto connection = open_connection(spec);
  if (!connection) return std::unexpected(connection.error());
  WarehouseInfo info;
  info.target = connection->describe();
  info.server_version = server_version_text(connection->server_version());
  auto version = schema_version_of(*connection, spec.schema);
  if (!version) return std::unexpected(version.error());
  info.schema_version = *version;
  return info;
}

struct Shipper::Impl {
  WarehouseSpec spec;
  Store& store;
  std::optional<pg::Connection> connection;
  std::string target;
  std::mutex cancel_mutex;             // guards `connection`'s existence against cancel()
  std::atomic<bool> cancelled{false};  // cancel() was called: nothing more is shipped
  std::chrono::steady_clock::time_point last_answer{};  // the server's last answer
  std::set<std::string> staged;                         // temporary tables made on this connection

  Impl(WarehouseSpec s, Store& st) : spec(std::move(s)), store(st) {}

  Result<bool> connect();
  Result<void> stage(const TableShape& shape, const std::vector<ShipValues>& rows);
  Result<void> send(const ShipBatch& batch, std::int64_t at_ms);
  void drop() {
    std::lock_guard lock(cancel_mutex);
    connection.reset();
    staged.clear();
  }
};

Result<bool> Shipper::Impl::connect() {
  auto opened = open_connection(spec);
  if (!opened) return std::unexpected(opened.error());
  {
    std::lock_guard lock(cancel_mutex);
    connection.emplace(std::move(*opened));
  }
  target = connection->describe();
  auto& c = *connection;
  if (auto migrated = migrate(c, spec.schema); !migrated) return std::unexpected(migrated.error());
  auto state = store.shipping().state();
  if (!state) return std::unexpected(state.error());
  if (!*state) return fail(ErrorKind::invalid_argument, "the store is not set up for shipping");
  // One shipper per plant: a session lock, let go when the connection ends.
  auto locked = c.exec("SELECT pg_try_advisory_lock(hashtext($1))",
                       {fmt::format("stagewell plant {} {}", spec.schema, spec.plant)});
  if (!locked) return std::unexpected(locked.error());
  if (pg::value(locked->get(), 0, 0) != "t") {
    return fail(ErrorKind::invalid_argument,
                fmt::format("another service is shipping to this warehouse as plant '{}' right "
                            "now; each service needs its own plant name (warehouse.plant)",
                            spec.plant));
  }
  const auto now = std::to_string(now_ms());
  auto claimed = c.exec(fmt::format("INSERT INTO {}.plant_stores (plant, store_id, "
                                    "first_shipped_ms, last_shipped_ms) VALUES ($1, $2, $3, $3) "
                                    "ON CONFLICT (plant) DO NOTHING",
                                    spec.schema),
                        {spec.plant, (*state)->store_id, now});
  if (!claimed) return std::unexpected(claimed.error());
  auto owner =
      c.exec(fmt::format("SELECT store_id FROM {}.plant_stores WHERE plant = $1", spec.schema),
             {spec.plant});
  if (!owner) return std::unexpected(owner.error());
  const auto owner_id = pg::value(owner->get(), 0, 0);
  if (owner_id != (*state)->store_id) {
    return fail(ErrorKind::invalid_argument,
                fmt::format("plant '{}' in the warehouse is fed by another store (store id {}, "
                            "this one is {}); give this service another plant name, or see "
                            "docs/warehouse.md, \"Moving a plant to a new store\"",
                            spec.plant, owner_id.value_or("?"), (*state)->store_id));
  }
  auto id = c.exec(fmt::format("SELECT warehouse_id FROM {}.warehouse", spec.schema));
  if (!id) return std::unexpected(id.error());
  const auto warehouse_id = pg::value(id->get(), 0, 0);
  if (!warehouse_id) return fail(ErrorKind::database, "the warehouse has no warehouse_id");
  return store.shipping().pair(*warehouse_id, spec.plant);
}

Result<void> Shipper::Impl::stage(const TableShape& shape, const std::vector<ShipValues>& rows) {
  auto& c = *connection;
  const std::string temp = fmt::format("ship_{}", shape.name);
  if (!staged.contains(temp)) {
    auto made =
        c.exec(fmt::format("CREATE TEMP TABLE IF NOT EXISTS {} (LIKE {}.{}) ON COMMIT DELETE ROWS",
                           temp, spec.schema, shape.name));
    if (!made) return std::unexpected(made.error());
    staged.insert(temp);
  }
  std::string data;
  for (const auto& row : rows) append_row(data, spec.plant, row);
  const std::string columns = "plant, " + joined(shape.columns, 0, shape.columns.size());
  if (auto copied = c.copy_in(fmt::format("COPY {} ({}) FROM STDIN", temp, columns), data);
      !copied) {
    return copied;
  }
  const std::string key = "plant, " + joined(shape.columns, 0, shape.key_columns);
  std::string updates;
  for (std::size_t i = shape.key_columns; i < shape.columns.size(); ++i) {
    if (!updates.empty()) updates += ", ";
    updates += fmt::format("{0} = excluded.{0}", shape.columns[i]);
  }
  // DISTINCT ON: a row may come twice in one batch (identical copies); an upsert may touch a row
  // only once per statement.
  auto merged =
      c.exec(fmt::format("INSERT INTO {0}.{1} ({2}) SELECT DISTINCT ON ({3}) {2} FROM {4} "
                         "ON CONFLICT ({3}) DO UPDATE SET {5}",
                         spec.schema, shape.name, columns, key, temp, updates));
  if (!merged) return std::unexpected(merged.error());
  return {};
}

Result<void> Shipper::Impl::send(const ShipBatch& batch, std::int64_t at_ms) {
  auto& c = *connection;
  if (auto begun = c.exec("BEGIN"); !begun) return std::unexpected(begun.error());
  auto sent = [&]() -> Result<void> {
    if (!batch.readings.empty()) {
      if (auto ok = stage(kReadings, batch.readings); !ok) return ok;
    }
    for (const auto& table : batch.tables) {
      const auto& shape = shape_of(table.table);
      if (!table.rows.empty()) {
        if (auto ok = stage(shape, table.rows); !ok) return ok;
      }
      for (const auto& key : table.gone) {
        std::string where = "plant = $1";
        std::vector<std::optional<std::string>> params{spec.plant};
        for (std::size_t i = 0; i < shape.key_columns && i < key.size(); ++i) {
          where += fmt::format(" AND {} = ${}", shape.columns[i], i + 2);
          params.push_back(key[i]);
        }
        auto removed = c.exec(
            fmt::format("DELETE FROM {}.{} WHERE {}", spec.schema, shape.name, where), params);
        if (!removed) return std::unexpected(removed.error());
      }
    }
    auto stamped =
        c.exec(fmt::format("UPDATE {}.plant_stores SET last_shipped_ms = $2 WHERE plant = $1",
                           spec.schema),
               {spec.plant, std::to_string(at_ms)});
    if (!stamped) return std::unexpected(stamped.error());
    return {};
  }();
  return finish(c, std::move(sent));
}

Shipper::Shipper(WarehouseSpec spec, Store& store)
    : impl_(std::make_unique<Impl>(std::move(spec), store)) {}
Shipper::~Shipper() = default;

bool Shipper::connected() const { return impl_->connection && impl_->connection->ok(); }
std::string Shipper::target() const { return impl_->target; }

void Shipper::cancel() {
  impl_->cancelled = true;
  std::lock_guard lock(impl_->cancel_mutex);
  if (impl_->connection) impl_->connection->cancel();
}

Result<ShipStep> Shipper::step(std::size_t max_readings) {
  ShipStep step;
  auto failed = [&](Error error) -> Result<ShipStep> {
    impl_->drop();
    return std::unexpected(std::move(error));
  };
  if (!connected()) {
    impl_->drop();
    auto paired = impl_->connect();
    if (!paired) return failed(paired.error());
    step.started_over = *paired;
  }
  // Cancelled while connecting: this shipper is being replaced, and must not ship beside the next.
  if (impl_->cancelled) return failed(Error{ErrorKind::cancelled, "shipping was cancelled"});
  auto batch = impl_->store.shipping().next(max_readings, 2000);
  if (!batch) return failed(batch.error());
  if (batch->empty()) {
    // Nothing to ship: a look at the server now and then, so that `connected` stays true to it.
    const auto now = std::chrono::steady_clock::now();
    if (now - impl_->last_answer >= std::chrono::seconds(10)) {
      if (auto answered = impl_->connection->exec("SELECT 1"); !answered) {
        return failed(Error{answered.error().kind, fmt::format("the warehouse does not answer: {}",
                                                               answered.error().message)});
      }
      impl_->last_answer = now;
    }
    return step;
  }
  const auto at = now_ms();
  if (auto sent = impl_->send(*batch, at); !sent) {
    return failed(Error{sent.error().kind,
                        fmt::format("shipping to the warehouse failed: {}", sent.error().message)});
  }
  impl_->last_answer = std::chrono::steady_clock::now();
  if (auto recorded = impl_->store.shipping().shipped(*batch, at); !recorded) {
    // In the warehouse but not recorded here: sent again next time, replacing itself.
    return std::unexpected(recorded.error());
  }
  step.readings = batch->readings.size();
  step.rows = batch->other_rows();
  step.moved = true;
  step.shipped_ms = at;
  return step;
}

}  // namespace stagewell
