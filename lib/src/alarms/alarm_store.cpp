// Alarm events in the database (schema/003_alarms.sql): written inside the caller's transaction,
// read back to restore the evaluators and for the page and metrics.
#include <fmt/format.h>

#include "stagewell/alarms.hpp"

namespace stagewell::alarms {

Result<void> record_event(sqlite::Connection& connection, SiteKey site, const AlarmEvent& event) {
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
}

Result<std::vector<AlarmRecord>> open_alarms(Store& store) {
  auto select = store.connection().prepare(
      "SELECT s.id, a.kind, a.raised_ms, a.value, a.threshold FROM alarm_events AS a "
      "JOIN sites AS s ON s.site_key = a.site_key WHERE a.cleared_ms IS NULL "
      "ORDER BY s.id, a.raised_ms, a.alarm_id");
  if (!select) return std::unexpected(select.error());
  std::vector<AlarmRecord> out;
  while (true) {
    auto row = select->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    const auto kind = parse_kind(select->column_text(1));
    if (!kind) continue;  // the table's CHECK allows only known kinds
    out.push_back({select->column_text(0), *kind, select->column_int64(2), std::nullopt,
                   select->column_double(3), select->column_double(4)});
  }
  return out;
}

Result<std::vector<AlarmKind>> open_kinds(sqlite::Connection& connection, SiteKey site) {
  auto select = connection.prepare(
      "SELECT kind FROM alarm_events WHERE site_key = ?1 AND cleared_ms IS NULL");
  if (!select) return std::unexpected(select.error());
  select->bind(1, site.value);
  std::vector<AlarmKind> out;
  while (true) {
    auto row = select->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    if (const auto kind = parse_kind(select->column_text(0))) out.push_back(*kind);
  }
  return out;
}

}  // namespace stagewell::alarms
