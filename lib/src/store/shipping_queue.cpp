// The warehouse's queue in the store (stagewell/shipping_queue.hpp,
// schema/010_warehouse_queue.sql).
#include "stagewell/shipping_queue.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <limits>
#include <random>
#include <unordered_map>

#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

using store_detail::each_row;
using store_detail::first_row;

// Changed readings closer together than this are logged as one range: shipping a few unchanged
// neighbours again costs less than a log entry each.
constexpr std::int64_t kRangeJoinMs = 6LL * 3600 * 1000;

constexpr std::int64_t kBeforeAll = std::numeric_limits<std::int64_t>::min();

std::string random_id() {
  std::random_device device;
  std::uniform_int_distribution<std::uint32_t> word;
  return fmt::format("{:08x}{:08x}{:08x}{:08x}", word(device), word(device), word(device),
                     word(device));
}

// How each small table's changes are logged in warehouse_changes: its item name, the table, which
// of the log's key columns (site_key, day, number_key) it fills from which of its own columns, and
// on which statements. One description gives the triggers (made while the store ships), their
// names, and the full log of a new warehouse (pair).
struct LoggedTable {
  ShipTable table;
  std::string_view item;
  std::string_view source;
  std::vector<std::pair<std::string_view, std::string_view>> keys;  // log column, source column
  std::vector<std::string_view> events;  // insert, update, delete (SQL reads them in any case)
};

const std::vector<LoggedTable>& logged_tables() {
  static const std::vector<LoggedTable> tables{
      {ShipTable::daily,
       "daily",
       "daily_figures",
       {{"site_key", "site_key"}, {"day", "day"}},
       {"insert", "update", "delete"}},
      {ShipTable::alarm,
       "alarm",
       "alarm_events",
       {{"number_key", "alarm_id"}},
       {"insert", "update", "delete"}},
      {ShipTable::reject,
       "reject",
       "rejected_lines",
       {{"number_key", "reject_id"}},
       {"insert", "delete"}},
      {ShipTable::version, "version", "config_versions", {{"number_key", "config_id"}}, {"insert"}},
      {ShipTable::site,
       "site",
       "site_settings",
       {{"site_key", "site_key"}},
       {"insert", "update", "delete"}},
  };
  return tables;
}

std::string trigger_name(const LoggedTable& t, std::string_view event) {
  return fmt::format("warehouse_{}_{}", t.item, event);
}

// A newer change of the same row deletes its entry and logs it anew, at the end (not INSERT OR
// REPLACE, which the statement that fires a trigger overrides with its own conflict handling).
std::string trigger_sql(const LoggedTable& t, std::string_view event) {
  const std::string_view row = event == "delete" ? "OLD" : "NEW";
  std::string match;
  std::string columns;
  std::string values;
  for (const auto& [log_column, source_column] : t.keys) {
    match += fmt::format(" AND {} = {}.{}", log_column, row, source_column);
    columns += fmt::format(", {}", log_column);
    values += fmt::format(", {}.{}", row, source_column);
  }
  return fmt::format(
      "CREATE TRIGGER IF NOT EXISTS {0} AFTER {1} ON {2} BEGIN "
      "DELETE FROM warehouse_changes WHERE item = '{3}'{4}; "
      "INSERT INTO warehouse_changes (item{5}) VALUES ('{3}'{6}); END;",
      trigger_name(t, event), event, t.source, t.item, match, columns, values);
}

// Every row of the table logged, as if each had just changed.
std::string log_all_sql(const LoggedTable& t) {
  std::string columns;
  std::string values;
  for (const auto& [log_column, source_column] : t.keys) {
    columns += fmt::format(", {}", log_column);
    values += fmt::format(", {}", source_column);
  }
  return fmt::format("INSERT INTO warehouse_changes (item{}) SELECT '{}'{} FROM {}", columns,
                     t.item, values, t.source);
}

std::string_view item_name(ShipTable table) {
  for (const auto& t : logged_tables()) {
    if (t.table == table) return t.item;
  }
  return "";
}

std::optional<ShipTable> table_of(std::string_view item) {
  for (const auto table : kShipTables) {
    if (item_name(table) == item) return table;
  }
  return std::nullopt;
}

// One row of a table by the key of its log entry (?1 site_key, ?2 day, ?3 number_key), with the
// columns of ShipTable's comment.
std::string_view row_sql(ShipTable table) {
  switch (table) {
    case ShipTable::daily:
      return "SELECT s.id, f.day, f.volume, f.mean_discharge, f.min_discharge, f.min_time_ms, "
             "f.max_discharge, f.max_time_ms, f.coverage, f.readings, f.flagged, f.volume_low, "
             "f.volume_high FROM daily_figures AS f JOIN sites AS s ON s.site_key = f.site_key "
             "WHERE f.site_key = ?1 AND f.day = ?2 AND ?3 = ?3";
    case ShipTable::alarm:
      return "SELECT a.alarm_id, s.id, a.kind, a.raised_ms, a.cleared_ms, a.value, a.threshold, "
             "a.clear_value FROM alarm_events AS a JOIN sites AS s ON s.site_key = a.site_key "
             "WHERE a.alarm_id = ?3 AND ?1 = ?1 AND ?2 = ?2";
    case ShipTable::reject:
      return "SELECT reject_id, source, position, raw, raw_bytes, reason, received_ms "
             "FROM rejected_lines WHERE reject_id = ?3 AND ?1 = ?1 AND ?2 = ?2";
    case ShipTable::version:
      return "SELECT v.config_id, s.id, v.config_json, v.hash, v.created_ms "
             "FROM config_versions AS v JOIN sites AS s ON s.site_key = v.site_key "
             "WHERE v.config_id = ?3 AND ?1 = ?1 AND ?2 = ?2";
    case ShipTable::site:
      return "SELECT s.id, d.name, d.time_zone, d.stage_unit, d.length_unit, d.discharge_unit, "
             "d.volume_unit, d.latitude, d.longitude, d.datum "
             "FROM site_settings AS d JOIN sites AS s ON s.site_key = d.site_key "
             "WHERE d.site_key = ?1 AND ?2 = ?2 AND ?3 = ?3";
  }
  return "";
}

ShipValues row_values(const sqlite::Statement& s) {
  ShipValues values;
  const int columns = s.column_count();
  values.reserve(static_cast<std::size_t>(columns));
  for (int i = 0; i < columns; ++i) values.push_back(s.column_as_text(i));
  return values;
}

// The readings of one site, as the `discharge` view shows them, in time order: the view's own
// expressions (depth from the version's terms, flag names, the band's ends), so the warehouse
// holds exactly what an analyst reads here.
constexpr std::string_view kReadingsSql =
    "SELECT site, time_ms, stage, depth, discharge, flags, version, discharge_low, "
    "discharge_high, discharge_jones FROM discharge "
    "WHERE site = ?1 AND time_ms >= ?2 AND time_ms <= ?3 ORDER BY time_ms LIMIT ?4";

struct LogEntry {
  std::int64_t change_id = 0;
  std::string item;
  std::int64_t site_key = 0;
  std::string day;
  std::int64_t number_key = 0;
  std::int64_t from_ms = 0;
  std::int64_t to_ms = 0;
};

// A read transaction: everything next() reads is of one moment. Ends (COMMIT) when destroyed.
class ReadSnapshot {
 public:
  explicit ReadSnapshot(sqlite::Connection& connection) : connection_(connection) {}
  Result<void> begin() {
    if (auto ok = connection_.exec("BEGIN"); !ok) return ok;
    open_ = true;
    return {};
  }
  ~ReadSnapshot() {
    if (open_) (void)connection_.exec("COMMIT");
  }
  ReadSnapshot(const ReadSnapshot&) = delete;
  ReadSnapshot& operator=(const ReadSnapshot&) = delete;

 private:
  sqlite::Connection& connection_;
  bool open_ = false;
};

Result<std::unordered_map<std::int64_t, std::string>> site_ids(sqlite::Connection& connection) {
  auto select = connection.cached("SELECT site_key, id FROM sites");
  if (!select) return std::unexpected(select.error());
  std::unordered_map<std::int64_t, std::string> ids;
  auto read = each_row(**select, [&](const auto& s) { ids[s.column_int64(0)] = s.column_text(1); });
  if (!read) return std::unexpected(read.error());
  return ids;
}

}  // namespace

std::size_t ShipBatch::other_rows() const {
  std::size_t n = 0;
  for (const auto& table : tables) n += table.rows.size() + table.gone.size();
  return n;
}

Result<void> store_detail::log_changed_readings(Core& core) {
  auto& changed = core.changed_behind;
  if (changed.empty()) return {};
  std::sort(changed.begin(), changed.end());
  auto insert = core.db().cached(
      "INSERT INTO warehouse_changes (item, site_key, from_ms, to_ms) "
      "SELECT 'readings', ?1, ?2, ?3 "
      "WHERE EXISTS (SELECT 1 FROM warehouse_state WHERE tracking = 1)");
  if (!insert) return std::unexpected(insert.error());
  auto log = [&](std::int64_t site, std::int64_t from_ms, std::int64_t to_ms) -> Result<void> {
    auto& s = **insert;
    s.bind(1, site);
    s.bind(2, from_ms);
    s.bind(3, to_ms);
    auto done = s.run();
    s.reset();
    return done;
  };
  std::size_t first = 0;
  for (std::size_t i = 1; i <= changed.size(); ++i) {
    const bool joins = i < changed.size() && changed[i].first == changed[first].first &&
                       changed[i].second - changed[i - 1].second <= kRangeJoinMs;
    if (joins) continue;
    if (auto done = log(changed[first].first, changed[first].second, changed[i - 1].second);
        !done) {
      return done;
    }
    first = i;
  }
  changed.clear();
  return {};
}

Result<void> ShippingQueue::track(bool on) {
  return store_detail::in_own_batch(*core_, "record shipping", [&](WriteBatch&) -> Result<void> {
    auto& db = core_->db();
    if (!on) {
      for (const auto& t : logged_tables()) {
        for (const auto event : t.events) {
          auto dropped = db.exec(fmt::format("DROP TRIGGER IF EXISTS {}", trigger_name(t, event)));
          if (!dropped) return dropped;
        }
      }
      // The store id stays: this is still the store that feeds its plant.
      if (auto done = db.exec("UPDATE warehouse_state SET tracking = 0, warehouse_id = NULL, "
                              "plant = NULL, last_shipped_ms = NULL");
          !done) {
        return done;
      }
      if (auto done = db.exec("DELETE FROM warehouse_positions"); !done) return done;
      return db.exec("DELETE FROM warehouse_changes");
    }
    auto insert = db.cached(
        "INSERT INTO warehouse_state (one, store_id) VALUES (1, ?1) "
        "ON CONFLICT (one) DO UPDATE SET tracking = 1");
    if (!insert) return std::unexpected(insert.error());
    (*insert)->bind(1, random_id());
    if (auto done = (*insert)->run(); !done) return done;
    // IF NOT EXISTS: made once, the schema unchanged after.
    for (const auto& t : logged_tables()) {
      for (const auto event : t.events) {
        if (auto made = db.exec(trigger_sql(t, event)); !made) return made;
      }
    }
    return {};
  });
}

Result<std::optional<ShippingState>> ShippingQueue::state() {
  auto select = core_->db().cached(
      "SELECT store_id, warehouse_id, plant, last_shipped_ms FROM warehouse_state "
      "WHERE tracking = 1");
  if (!select) return std::unexpected(select.error());
  return first_row(**select, [](const auto& s) {
    auto text = [&](int column) {
      return s.column_is_null(column) ? std::nullopt : std::optional(s.column_text(column));
    };
    return ShippingState{s.column_text(0), text(1), text(2), store_detail::optional_int64(s, 3)};
  });
}

Result<bool> ShippingQueue::pair(std::string_view warehouse_id, std::string_view plant) {
  auto current = state();
  if (!current) return std::unexpected(current.error());
  if (!*current) return fail(ErrorKind::invalid_argument, "the store is not set up for shipping");
  if ((*current)->warehouse_id == warehouse_id && (*current)->plant == plant) return false;
  auto reset =
      store_detail::in_own_batch(*core_, "start shipping over", [&](WriteBatch&) -> Result<void> {
        auto& db = core_->db();
        auto update = db.cached(
            "UPDATE warehouse_state SET warehouse_id = ?1, plant = ?2, last_shipped_ms = NULL");
        if (!update) return std::unexpected(update.error());
        (*update)->bind(1, warehouse_id);
        (*update)->bind(2, plant);
        if (auto done = (*update)->run(); !done) return done;
        if (auto done = db.exec("DELETE FROM warehouse_positions"); !done) return done;
        if (auto done = db.exec("DELETE FROM warehouse_changes"); !done) return done;
        for (const auto& t : logged_tables()) {
          if (auto done = db.exec(log_all_sql(t)); !done) return done;
        }
        return {};
      });
  if (!reset) return std::unexpected(reset.error());
  return true;
}

Result<ShipBatch> ShippingQueue::next(std::size_t max_readings, std::size_t max_rows) {
  if (auto ok = core_->require_no_batch("read what is to ship"); !ok) {
    return std::unexpected(ok.error());
  }
  auto& db = core_->db();
  ReadSnapshot snapshot(db);
  if (auto ok = snapshot.begin(); !ok) return std::unexpected(ok.error());
  auto ids = site_ids(db);
  if (!ids) return std::unexpected(ids.error());

  ShipBatch batch;
  for (const auto table : kShipTables) batch.tables.push_back({table, {}, {}});
  auto readings = db.cached(kReadingsSql);
  if (!readings) return std::unexpected(readings.error());
  // Appends the site's readings in [from_ms, to_ms], at most `limit`; the last one's time.
  auto add_readings = [&](const std::string& site, std::int64_t from_ms, std::int64_t to_ms,
                          std::size_t limit) -> Result<std::optional<std::int64_t>> {
    auto& s = **readings;
    s.reset();
    s.bind(1, std::string_view(site));
    s.bind(2, from_ms);
    s.bind(3, to_ms);
    s.bind(4, static_cast<std::int64_t>(limit));
    std::optional<std::int64_t> last;
    auto read = each_row(s, [&](const auto& row) {
      batch.readings.push_back(row_values(row));
      last = row.column_int64(1);
    });
    s.reset();
    if (!read) return std::unexpected(read.error());
    return last;
  };

  // The log, in order, until either budget is spent.
  auto log = db.cached(
      "SELECT change_id, item, site_key, day, number_key, coalesce(from_ms, 0), "
      "coalesce(to_ms, 0) FROM warehouse_changes ORDER BY change_id LIMIT ?1");
  if (!log) return std::unexpected(log.error());
  (*log)->bind(1, static_cast<std::int64_t>(max_rows + 1));
  std::vector<LogEntry> entries;
  auto read_log = each_row(**log, [&](const auto& s) {
    entries.push_back({s.column_int64(0), s.column_text(1), s.column_int64(2), s.column_text(3),
                       s.column_int64(4), s.column_int64(5), s.column_int64(6)});
  });
  (*log)->reset();
  if (!read_log) return std::unexpected(read_log.error());

  std::size_t rows = 0;
  for (const auto& entry : entries) {
    if (rows >= max_rows || batch.readings.size() >= max_readings) break;
    if (entry.item == "readings") {
      const auto site = ids->find(entry.site_key);
      if (site != ids->end()) {
        const std::size_t before = batch.readings.size();
        const std::size_t room = max_readings - before;
        auto last = add_readings(site->second, entry.from_ms, entry.to_ms, room);
        if (!last) return std::unexpected(last.error());
        if (*last && batch.readings.size() - before >= room && **last < entry.to_ms) {
          // The budget ran out inside the range: the rest of it next time.
          batch.range_left = ShipBatch::RangeLeft{entry.change_id, **last + 1};
          break;
        }
      }
      batch.changes_done_through = entry.change_id;
      continue;
    }
    const auto table = table_of(entry.item);
    if (!table) {  // written by a newer program: nothing this one can ship
      batch.changes_done_through = entry.change_id;
      continue;
    }
    auto& out = batch.tables[static_cast<std::size_t>(*table)];
    auto select = db.cached(row_sql(*table));
    if (!select) return std::unexpected(select.error());
    auto& s = **select;
    s.bind(1, entry.site_key);
    s.bind(2, std::string_view(entry.day));
    s.bind(3, entry.number_key);
    auto row = first_row(s, [](const auto& r) { return row_values(r); });
    s.reset();
    if (!row) return std::unexpected(row.error());
    if (*row) {
      out.rows.push_back(std::move(**row));
    } else {
      // Deleted here: its key, to delete there.
      const auto site = ids->find(entry.site_key);
      const std::optional<std::string> site_id =
          site == ids->end() ? std::nullopt : std::optional(site->second);
      switch (*table) {
        case ShipTable::daily:
          out.gone.push_back({site_id, entry.day});
          break;
        case ShipTable::site:
          out.gone.push_back({site_id});
          break;
        default:
          out.gone.push_back({std::to_string(entry.number_key)});
          break;
      }
    }
    ++rows;
    batch.changes_done_through = entry.change_id;
  }

  // Then the readings after each site's position.
  if (!batch.range_left && batch.readings.size() < max_readings) {
    auto positions = db.cached(
        "SELECT s.site_key, s.id, p.shipped_to_ms FROM sites AS s "
        "LEFT JOIN warehouse_positions AS p ON p.site_key = s.site_key ORDER BY s.site_key");
    if (!positions) return std::unexpected(positions.error());
    struct SitePosition {
      std::int64_t key;
      std::string id;
      std::optional<std::int64_t> shipped_to_ms;
    };
    std::vector<SitePosition> sites;
    auto read = each_row(**positions, [&](const auto& s) {
      sites.push_back({s.column_int64(0), s.column_text(1), store_detail::optional_int64(s, 2)});
    });
    (*positions)->reset();
    if (!read) return std::unexpected(read.error());
    for (const auto& site : sites) {
      if (batch.readings.size() >= max_readings) break;
      const std::int64_t from = site.shipped_to_ms ? *site.shipped_to_ms + 1 : kBeforeAll;
      auto last = add_readings(site.id, from, std::numeric_limits<std::int64_t>::max(),
                               max_readings - batch.readings.size());
      if (!last) return std::unexpected(last.error());
      if (*last) batch.positions.push_back({SiteKey{site.key}, **last});
    }
  }
  return batch;
}

Result<void> ShippingQueue::shipped(const ShipBatch& batch, std::int64_t shipped_ms) {
  return store_detail::in_own_batch(*core_, "record a shipment", [&](WriteBatch&) -> Result<void> {
    auto& db = core_->db();
    if (batch.changes_done_through) {
      auto remove = db.cached("DELETE FROM warehouse_changes WHERE change_id <= ?1");
      if (!remove) return std::unexpected(remove.error());
      (*remove)->bind(1, *batch.changes_done_through);
      if (auto done = (*remove)->run(); !done) return done;
    }
    if (batch.range_left) {
      auto update = db.cached("UPDATE warehouse_changes SET from_ms = ?2 WHERE change_id = ?1");
      if (!update) return std::unexpected(update.error());
      (*update)->bind(1, batch.range_left->change_id);
      (*update)->bind(2, batch.range_left->next_from_ms);
      if (auto done = (*update)->run(); !done) return done;
    }
    auto position = db.cached(
        "INSERT INTO warehouse_positions (site_key, shipped_to_ms) VALUES (?1, ?2) "
        "ON CONFLICT (site_key) DO UPDATE SET "
        "shipped_to_ms = max(shipped_to_ms, excluded.shipped_to_ms)");
    if (!position) return std::unexpected(position.error());
    for (const auto& p : batch.positions) {
      auto& s = **position;
      s.bind(1, p.site.value);
      s.bind(2, p.shipped_to_ms);
      auto done = s.run();
      s.reset();
      if (!done) return done;
    }
    auto stamp = db.cached("UPDATE warehouse_state SET last_shipped_ms = ?1");
    if (!stamp) return std::unexpected(stamp.error());
    (*stamp)->bind(1, shipped_ms);
    return (*stamp)->run();
  });
}

Result<std::int64_t> ShippingQueue::lag_readings() {
  auto select = core_->db().cached(
      "SELECT CASE WHEN NOT EXISTS (SELECT 1 FROM warehouse_state WHERE tracking = 1) "
      "THEN (SELECT count(*) FROM readings) ELSE "
      "coalesce((SELECT sum((SELECT count(*) FROM readings AS r WHERE r.site_key = s.site_key "
      "AND r.time_ms > coalesce(p.shipped_to_ms, -9223372036854775807 - 1))) "
      "FROM sites AS s LEFT JOIN warehouse_positions AS p ON p.site_key = s.site_key), 0) + "
      "coalesce((SELECT sum((SELECT count(*) FROM readings AS r WHERE r.site_key = c.site_key "
      "AND r.time_ms BETWEEN c.from_ms AND c.to_ms)) FROM warehouse_changes AS c "
      "WHERE c.item = 'readings'), 0) END");
  if (!select) return std::unexpected(select.error());
  return store_detail::single_count(**select);
}

Result<std::int64_t> ShippingQueue::lag_rows() {
  auto select =
      core_->db().cached("SELECT count(*) FROM warehouse_changes WHERE item != 'readings'");
  if (!select) return std::unexpected(select.error());
  return store_detail::single_count(**select);
}

}  // namespace stagewell
