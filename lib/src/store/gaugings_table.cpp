// `gauging_records` and the `gaugings` view (schema/009_uncertainty_and_gaugings.sql).
#include "stagewell/gaugings_table.hpp"

#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

void bind_optional_text(sqlite::Statement& s, int index, const std::optional<std::string>& text) {
  if (text) {
    s.bind(index, std::string_view(*text));
  } else {
    s.bind_null(index);
  }
}

std::optional<std::string> optional_text(const sqlite::Statement& s, int column) {
  if (s.column_is_null(column)) return std::nullopt;
  return s.column_text(column);
}

}  // namespace

Result<void> GaugingsTable::put(WriteBatch& batch, const GaugingRecord& record) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        auto insert = connection.cached(
            "INSERT OR REPLACE INTO gauging_records (site_key, time_ms, stage, "
            "stage_interpolated, measured, uncertainty, method, note, computed, roughness, "
            "config_id, imported_ms) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12)");
        if (!insert) return std::unexpected(insert.error());
        auto& s = **insert;
        s.bind(1, record.site.value);
        s.bind(2, record.time_ms);
        s.bind(3, record.stage);
        s.bind(4, std::int64_t{record.stage_interpolated ? 1 : 0});
        s.bind(5, record.measured);
        s.bind(6, record.uncertainty);
        bind_optional_text(s, 7, record.method);
        bind_optional_text(s, 8, record.note);
        s.bind(9, record.computed);
        s.bind(10, record.roughness);
        if (record.config) {
          s.bind(11, record.config->value);
        } else {
          s.bind_null(11);
        }
        s.bind(12, record.imported_ms);
        return s.run();
      });
}

Result<void> GaugingsTable::set_computed(WriteBatch& batch, SiteKey site, std::int64_t time_ms,
                                         const GaugingComputed& computed) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        auto update = connection.cached(
            "UPDATE gauging_records SET computed = ?3, roughness = ?4, config_id = ?5 "
            "WHERE site_key = ?1 AND time_ms = ?2");
        if (!update) return std::unexpected(update.error());
        auto& s = **update;
        s.bind(1, site.value);
        s.bind(2, time_ms);
        s.bind(3, computed.computed);
        s.bind(4, computed.roughness);
        if (computed.config) {
          s.bind(5, computed.config->value);
        } else {
          s.bind_null(5);
        }
        return s.run();
      });
}

Result<std::vector<GaugingRecord>> GaugingsTable::range(SiteKey site, std::int64_t from_ms,
                                                        std::int64_t to_ms) {
  auto select = core_->db().cached(
      "SELECT time_ms, stage, stage_interpolated, measured, uncertainty, method, note, computed, "
      "roughness, config_id, imported_ms FROM gauging_records "
      "WHERE site_key = ?1 AND time_ms BETWEEN ?2 AND ?3 ORDER BY time_ms");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, from_ms);
  (*select)->bind(3, to_ms);
  std::vector<GaugingRecord> out;
  auto done = store_detail::each_row(**select, [&](const sqlite::Statement& s) {
    GaugingRecord record;
    record.site = site;
    record.time_ms = s.column_int64(0);
    record.stage = s.column_double(1);
    record.stage_interpolated = s.column_int64(2) != 0;
    record.measured = s.column_double(3);
    record.uncertainty = s.column_double(4);
    record.method = optional_text(s, 5);
    record.note = optional_text(s, 6);
    record.computed = s.column_optional_double(7);
    record.roughness = s.column_optional_double(8);
    if (const auto id = store_detail::optional_int64(s, 9)) record.config = ConfigVersionId{*id};
    record.imported_ms = s.column_int64(10);
    out.push_back(std::move(record));
  });
  if (!done) return std::unexpected(done.error());
  return out;
}

Result<std::vector<GaugingViewRow>> GaugingsTable::view(SiteKey site, std::int64_t from_ms,
                                                        std::int64_t to_ms) {
  // The view's own columns, so that what the command shows is what an analyst's query sees.
  auto select = core_->db().cached(
      "SELECT g.time_ms, g.stage, g.measured, g.computed, g.difference_percent, "
      "g.implied_roughness, g.method, g.note, g.version FROM gaugings AS g "
      "JOIN sites AS s ON s.id = g.site WHERE s.site_key = ?1 AND g.time_ms BETWEEN ?2 AND ?3 "
      "ORDER BY g.time_ms");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, from_ms);
  (*select)->bind(3, to_ms);
  std::vector<GaugingViewRow> out;
  auto done = store_detail::each_row(**select, [&](const sqlite::Statement& s) {
    out.push_back(GaugingViewRow{.time_ms = s.column_int64(0),
                                 .stage = s.column_double(1),
                                 .measured = s.column_double(2),
                                 .computed = s.column_optional_double(3),
                                 .difference_percent = s.column_optional_double(4),
                                 .implied_roughness = s.column_optional_double(5),
                                 .method = optional_text(s, 6),
                                 .note = optional_text(s, 7),
                                 .version = optional_text(s, 8)});
  });
  if (!done) return std::unexpected(done.error());
  return out;
}

}  // namespace stagewell
