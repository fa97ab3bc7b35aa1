// `readings`: the reads every part of the program needs, and the recomputation's rewrites. The
// ingest's own writes (insert, add_flags) are the WriteBatch's (write_batch.cpp).
#include "stagewell/readings_table.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <string>

#include "store/depth_terms.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {

using store_detail::each_row;
using store_detail::first_row;
using store_detail::single_count;
using store_detail::flags_column;
using store_detail::row_limit;

namespace {

// A StoredReading of `site` from the columns time_ms, stage, depth, discharge, flags, config_id,
// band, discharge_jones.
StoredReading stored_reading(SiteKey site, const sqlite::Statement& s) {
  return StoredReading{.site = site,
                       .time_ms = s.column_int64(0),
                       .stage = s.column_double(1),
                       .depth = s.column_double(2),
                       .discharge = s.column_optional_double(3),
                       .flags = flags_column(s, 4),
                       .config = ConfigVersionId{s.column_int64(5)},
                       .band = store_detail::band_column(s, 6),
                       .discharge_jones = store_detail::jones_column(s, 3, 7)};
}

// A SELECT of the columns stored_reading() takes, depth computed from the version's terms
// (schema 6), followed by `rest` (a WHERE clause over `readings AS r`, an ORDER BY...).
std::string stored_readings_sql(std::string_view rest) {
  return fmt::format(
      "SELECT r.time_ms, r.stage, {}, r.discharge, r.flags, r.config_id, r.band_bp, r.jones_bp "
      "FROM readings AS r "
      "LEFT JOIN version_depth_terms AS d ON d.config_id = r.config_id {}",
      store_detail::kDepthSql, rest);
}

// Binds a site's range of times: ?1 the site, ?2 and ?3 the first and last time (ms).
sqlite::Statement& bind_range(sqlite::Statement& s, SiteKey site, std::int64_t from_ms,
                              std::int64_t to_ms) {
  s.bind(1, site.value);
  s.bind(2, from_ms);
  s.bind(3, to_ms);
  return s;
}


// Two numbers that are both NULL when there is nothing to span (min and max of no rows).
Result<std::optional<TimeSpan>> time_span(sqlite::Statement& statement) {
  auto row = first_row(statement, [](const auto& s) -> std::optional<TimeSpan> {
    if (s.column_is_null(0)) return std::nullopt;
    return TimeSpan{s.column_int64(0), s.column_int64(1)};
  });
  if (!row) return std::unexpected(row.error());
  return row->value_or(std::nullopt);
}

}  // namespace

namespace store_detail {

Result<std::optional<double>> stored_stage(sqlite::Connection& connection, SiteKey site,
                                           std::int64_t time_ms) {
  auto select =
      connection.cached("SELECT stage FROM readings WHERE site_key = ?1 AND time_ms = ?2");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, time_ms);
  return first_row(**select, [](const auto& s) { return s.column_double(0); });
}

Result<bool> or_flags(sqlite::Connection& connection, SiteKey site, std::int64_t time_ms,
                      Flags flags) {
  auto update = connection.cached(
      "UPDATE readings SET flags = flags | ?3 WHERE site_key = ?1 AND time_ms = ?2");
  if (!update) return std::unexpected(update.error());
  (*update)->bind(1, site.value);
  (*update)->bind(2, time_ms);
  (*update)->bind(3, static_cast<std::int64_t>(flags.bits()));
  if (auto done = (*update)->run(); !done) return std::unexpected(done.error());
  return connection.changes() == 1;
}

}  // namespace store_detail

Result<std::vector<StoredReading>> ReadingsTable::recent(SiteKey site, std::int64_t at_or_before_ms,
                                                         std::size_t count) {
  // Newest first along the primary key, then reversed: the caller replays them in time order.
  static const std::string sql = stored_readings_sql(
      "WHERE r.site_key = ?1 AND r.time_ms <= ?2 ORDER BY r.time_ms DESC LIMIT ?3");
  auto select = core_->db().cached(sql);
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, at_or_before_ms);
  (*select)->bind(3, row_limit(count));
  std::vector<StoredReading> readings;
  auto read =
      each_row(**select, [&](const auto& s) { readings.push_back(stored_reading(site, s)); });
  if (!read) return std::unexpected(read.error());
  std::reverse(readings.begin(), readings.end());
  return readings;
}

Result<std::optional<double>> ReadingsTable::stage_at(SiteKey site, std::int64_t time_ms) {
  return store_detail::stored_stage(core_->db(), site, time_ms);
}

Result<std::int64_t> ReadingsTable::count() {
  auto select = core_->db().cached("SELECT count(*) FROM readings");
  if (!select) return std::unexpected(select.error());
  return single_count(**select);
}

Result<std::int64_t> ReadingsTable::count(SiteKey site) {
  auto select = core_->db().cached("SELECT count(*) FROM readings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  return single_count(**select);
}

Result<std::int64_t> ReadingsTable::count(SiteKey site, std::int64_t from_ms, std::int64_t to_ms) {
  auto select = core_->db().cached(
      "SELECT count(*) FROM readings WHERE site_key = ?1 AND time_ms BETWEEN ?2 AND ?3");
  if (!select) return std::unexpected(select.error());
  return single_count(bind_range(**select, site, from_ms, to_ms));
}

Result<std::optional<TimeSpan>> ReadingsTable::span(SiteKey site) {
  // Two probes of the primary key, not a scan.
  auto select = core_->db().cached(
      "SELECT (SELECT min(time_ms) FROM readings WHERE site_key = ?1), "
      "(SELECT max(time_ms) FROM readings WHERE site_key = ?1)");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  return time_span(**select);
}

Result<void> ReadingsTable::range(SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
                                  std::size_t max_rows, std::vector<StoredReading>& out) {
  out.clear();
  static const std::string sql = stored_readings_sql(
      "WHERE r.site_key = ?1 AND r.time_ms BETWEEN ?2 AND ?3 ORDER BY r.time_ms LIMIT ?4");
  auto select = core_->db().cached(sql);
  if (!select) return std::unexpected(select.error());
  bind_range(**select, site, from_ms, to_ms).bind(4, row_limit(max_rows));
  return each_row(**select, [&](const auto& s) { out.push_back(stored_reading(site, s)); });
}

Result<void> ReadingsTable::day_readings(SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
                                         std::vector<daily::DayReading>& out) {
  out.clear();
  // One range of the readings' primary key (site_key, time_ms): already in time order.
  auto select = core_->db().cached(
      "SELECT time_ms, discharge, flags, band_bp FROM readings "
      "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms <= ?3 ORDER BY time_ms");
  if (!select) return std::unexpected(select.error());
  return each_row(bind_range(**select, site, from_ms, to_ms), [&](const auto& row) {
    out.push_back({row.column_int64(0), row.column_optional_double(1), flags_column(row, 2),
                   store_detail::band_column(row, 3)});
  });
}

Result<std::vector<daily::DayReading>> ReadingsTable::day_readings(SiteKey site,
                                                                   std::int64_t from_ms,
                                                                   std::int64_t to_ms) {
  std::vector<daily::DayReading> readings;
  if (auto done = day_readings(site, from_ms, to_ms, readings); !done) {
    return std::unexpected(done.error());
  }
  return readings;
}

Result<std::vector<plot::PlotReading>> ReadingsTable::plot_readings(SiteKey site,
                                                                    std::int64_t from_ms,
                                                                    std::int64_t to_ms) {
  auto select = core_->db().cached(
      "SELECT time_ms, stage, discharge, flags, band_bp FROM readings "
      "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms < ?3 ORDER BY time_ms");
  if (!select) return std::unexpected(select.error());
  std::vector<plot::PlotReading> readings;
  auto read = each_row(bind_range(**select, site, from_ms, to_ms), [&](const auto& row) {
    readings.push_back({row.column_int64(0), row.column_double(1), row.column_optional_double(2),
                        flags_column(row, 3), store_detail::band_column(row, 4)});
  });
  if (!read) return std::unexpected(read.error());
  return readings;
}

Result<std::optional<TimeSpan>> ReadingsTable::mismatched(SiteKey site, std::int64_t from_ms,
                                                          std::int64_t to_ms,
                                                          ConfigVersionId version) {
  auto select = core_->db().cached(
      "SELECT min(time_ms), max(time_ms) FROM readings "
      "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms < ?3 AND config_id != ?4");
  if (!select) return std::unexpected(select.error());
  bind_range(**select, site, from_ms, to_ms).bind(4, version.value);
  return time_span(**select);
}

Result<void> ReadingsTable::rewrite(WriteBatch& batch, SiteKey site, std::int64_t time_ms,
                                    const ComputedReading& values) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        store_detail::BatchAccess::rewrote_readings(batch);
        auto update = connection.cached(
            "UPDATE readings SET discharge = ?3, flags = ?4, config_id = ?5, band_bp = ?6, "
            "jones_bp = ?7 WHERE site_key = ?1 AND time_ms = ?2");
        if (!update) return std::unexpected(update.error());
        // values.depth is not stored: the new version's terms give it (schema 6).
        auto& s = **update;
        s.bind(1, site.value);
        s.bind(2, time_ms);
        s.bind(3, values.discharge);
        s.bind(4, static_cast<std::int64_t>(values.flags.bits()));
        s.bind(5, values.config.value);
        store_detail::bind_optional(s, 6, store_detail::band_bp(values.band));
        store_detail::bind_optional(
            s, 7, store_detail::jones_bp(values.discharge, values.discharge_jones));
        if (auto done = s.run(); !done) return done;
        if (connection.changes() > 0) core_->changed_reading(site, time_ms);
        return {};
      });
}

Result<void> ReadingsTable::rewrite_flags(WriteBatch& batch, SiteKey site, std::int64_t time_ms,
                                          Flags flags) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        store_detail::BatchAccess::rewrote_readings(batch);
        auto updated = store_detail::or_flags(connection, site, time_ms, flags);
        if (!updated) return std::unexpected(updated.error());
        if (*updated) core_->changed_reading(site, time_ms);
        return {};
      });
}

}  // namespace stagewell
