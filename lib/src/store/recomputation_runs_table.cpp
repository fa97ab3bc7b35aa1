// `recomputation_runs` (schema/004_history.sql, renamed by 005, `finished_ms` from 007): one row
// per recomputation of one site, written in the transaction of each of its steps.
#include "stagewell/store_tables.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

// Binds what a run's row holds: ?1 site, ?2 start, ?3 to ?9 the period, versions and changes,
// ?10 when it finished.
void bind_run(sqlite::Statement& s, const RecomputationRun& run) {
  s.bind(1, run.site.value);
  s.bind(2, run.at_ms);
  s.bind(3, run.period_from_ms);
  s.bind(4, run.period_to_ms);
  s.bind(5, std::string_view(run.config_before));
  s.bind(6, std::string_view(run.config_after));
  s.bind(7, run.readings_changed);
  s.bind(8, run.max_discharge_change);
  s.bind(9, run.max_daily_volume_change);
  if (run.finished_ms) {
    s.bind(10, *run.finished_ms);
  } else {
    s.bind_null(10);
  }
}

}  // namespace

Result<std::int64_t> RecomputationRunsTable::add(WriteBatch& batch, const RecomputationRun& run) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<std::int64_t> {
        auto insert = connection.cached(
            "INSERT INTO recomputation_runs (site_key, at_ms, period_from_ms, period_to_ms, "
            "config_before, config_after, readings_changed, max_discharge_change, "
            "max_daily_volume_change, finished_ms) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)");
        if (!insert) return std::unexpected(insert.error());
        bind_run(**insert, run);
        if (auto done = (*insert)->run(); !done) return std::unexpected(done.error());
        return connection.last_insert_rowid();
      });
}

Result<void> RecomputationRunsTable::update(WriteBatch& batch, std::int64_t id,
                                            const RecomputationRun& run) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        auto update = connection.cached(
            "UPDATE recomputation_runs SET period_from_ms = ?3, period_to_ms = ?4, "
            "config_before = ?5, config_after = ?6, readings_changed = ?7, "
            "max_discharge_change = ?8, max_daily_volume_change = ?9, finished_ms = ?10 "
            "WHERE recomputation_id = ?11 AND site_key = ?1 AND at_ms = ?2");
        if (!update) return std::unexpected(update.error());
        bind_run(**update, run);
        (*update)->bind(11, id);
        return (*update)->run();
      });
}

Result<std::optional<std::pair<std::int64_t, RecomputationRun>>>
RecomputationRunsTable::unfinished(SiteKey site) {
  auto select = core_->db().cached(
      "SELECT recomputation_id, at_ms, period_from_ms, period_to_ms, config_before, config_after, "
      "readings_changed, max_discharge_change, max_daily_volume_change FROM recomputation_runs "
      "WHERE site_key = ?1 AND finished_ms IS NULL ORDER BY recomputation_id DESC LIMIT 1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  return store_detail::first_row(**select, [site](const sqlite::Statement& s) {
    return std::pair(s.column_int64(0),
                     RecomputationRun{.site = site,
                                      .at_ms = s.column_int64(1),
                                      .period_from_ms = s.column_int64(2),
                                      .period_to_ms = s.column_int64(3),
                                      .config_before = s.column_text(4),
                                      .config_after = s.column_text(5),
                                      .readings_changed = s.column_int64(6),
                                      .max_discharge_change = s.column_double(7),
                                      .max_daily_volume_change = s.column_double(8),
                                      .finished_ms = std::nullopt});
  });
}

}  // namespace stagewell
