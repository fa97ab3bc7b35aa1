// Alarm events in the database (schema/003_alarms.sql): written inside the batch of the readings
// that raised or cleared them, read back to restore the evaluators and for the page and metrics.
#include "stagewell/alarm_table.hpp"

#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {

using alarms::AlarmEvent;
using alarms::AlarmKind;
using store_detail::each_row;

Result<void> AlarmTable::record(WriteBatch& batch, SiteKey site, const AlarmEvent& event) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        if (event.change == AlarmEvent::Change::raised) {
          auto insert = connection.cached(
              "INSERT INTO alarm_events (site_key, kind, raised_ms, value, threshold) "
              "VALUES (?1, ?2, ?3, ?4, ?5)");
          if (!insert) return std::unexpected(insert.error());
          (*insert)->bind(1, site.value);
          (*insert)->bind(2, name(event.kind));
          (*insert)->bind(3, event.time_ms);
          (*insert)->bind(4, event.value);
          (*insert)->bind(5, event.threshold);
          return (*insert)->run();
        }
        auto update = connection.cached(
            "UPDATE alarm_events SET cleared_ms = ?3, clear_value = ?4 "
            "WHERE site_key = ?1 AND kind = ?2 AND cleared_ms IS NULL");
        if (!update) return std::unexpected(update.error());
        (*update)->bind(1, site.value);
        (*update)->bind(2, name(event.kind));
        (*update)->bind(3, event.time_ms);
        (*update)->bind(4, event.value);
        return (*update)->run();
      });
}

Result<std::vector<alarms::AlarmRecord>> AlarmTable::open() {
  auto select = core_->db().cached(
      "SELECT s.id, a.kind, a.raised_ms, a.value, a.threshold FROM alarm_events AS a "
      "JOIN sites AS s ON s.site_key = a.site_key WHERE a.cleared_ms IS NULL "
      "ORDER BY s.id, a.raised_ms, a.alarm_id");
  if (!select) return std::unexpected(select.error());
  std::vector<alarms::AlarmRecord> out;
  auto read = each_row(**select, [&](const auto& s) {
    // The table's CHECK allows only known kinds.
    if (const auto kind = alarms::parse_kind(s.column_text(1))) {
      out.push_back({s.column_text(0), *kind, s.column_int64(2), std::nullopt, s.column_double(3),
                     s.column_double(4)});
    }
  });
  if (!read) return std::unexpected(read.error());
  return out;
}

Result<std::vector<AlarmKind>> AlarmTable::open_kinds(SiteKey site) {
  auto select = core_->db().cached(
      "SELECT kind FROM alarm_events WHERE site_key = ?1 AND cleared_ms IS NULL");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  std::vector<AlarmKind> out;
  auto read = each_row(**select, [&](const auto& s) {
    if (const auto kind = alarms::parse_kind(s.column_text(0))) out.push_back(*kind);
  });
  if (!read) return std::unexpected(read.error());
  return out;
}

Result<std::vector<alarms::AlarmState>> AlarmTable::states(std::size_t max_rows) {
  auto select = core_->db().cached(
      "SELECT s.id, a.kind, max(a.cleared_ms IS NULL) FROM alarm_events AS a "
      "JOIN sites AS s ON s.site_key = a.site_key GROUP BY s.id, a.kind ORDER BY s.id, a.kind "
      "LIMIT ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, store_detail::row_limit(max_rows));
  std::vector<alarms::AlarmState> out;
  auto read = each_row(**select, [&](const auto& s) {
    if (const auto kind = alarms::parse_kind(s.column_text(1))) {
      out.push_back({s.column_text(0), *kind, s.column_int64(2) != 0});
    }
  });
  if (!read) return std::unexpected(read.error());
  return out;
}

Result<bool> AlarmTable::available() {
  auto select = core_->db().cached(
      "SELECT count(*) FROM sqlite_master WHERE name = 'alarm_events' AND type = 'table'");
  if (!select) return std::unexpected(select.error());
  auto count = store_detail::first_row(**select, [](const auto& s) { return s.column_int64(0); });
  if (!count) return std::unexpected(count.error());
  return count->value_or(0) > 0;
}

}  // namespace stagewell
