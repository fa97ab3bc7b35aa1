#include "recompute_record.hpp"

#include <algorithm>

namespace stagewell {
namespace {

void add_distinct(std::vector<ConfigVersionId>& list, ConfigVersionId id) {
  if (std::find(list.begin(), list.end(), id) == list.end()) list.push_back(id);
}

// "hash1,hash2": the versions' short names (config_versions.hash).
Result<std::string> hashes(sqlite::Connection& connection,
                           const std::vector<ConfigVersionId>& ids) {
  std::string out;
  for (const ConfigVersionId id : ids) {
    auto select = connection.cached("SELECT hash FROM config_versions WHERE config_id = ?1");
    if (!select) return std::unexpected(select.error());
    (*select)->bind(1, id.value);
    auto row = (*select)->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) continue;
    out += (out.empty() ? "" : ",") + (*select)->column_text(0);
  }
  return out;
}

}  // namespace

void RecomputeRecord::saw(ConfigVersionId before, ConfigVersionId after, std::int64_t time_ms) {
  add_distinct(before_, before);
  add_distinct(after_, after);
  if (!first_ms_) first_ms_ = time_ms;  // readings come in time order
  last_ms_ = time_ms;
}

Result<void> RecomputeRecord::write(sqlite::Connection& connection, SiteKey site,
                                    std::int64_t at_ms, const RecomputationTotals& totals) {
  auto before = hashes(connection, before_);
  if (!before) return std::unexpected(before.error());
  auto after = hashes(connection, after_);
  if (!after) return std::unexpected(after.error());
  auto statement = connection.cached(
      row_id_ ? "UPDATE recomputation_runs SET period_from_ms = ?3, period_to_ms = ?4, "
                "config_before = ?5, config_after = ?6, readings_changed = ?7, "
                "max_discharge_change = ?8, max_daily_volume_change = ?9 "
                "WHERE recomputation_id = ?10 AND site_key = ?1 AND at_ms = ?2"
              : "INSERT INTO recomputation_runs (site_key, at_ms, period_from_ms, period_to_ms, "
                "config_before, config_after, readings_changed, max_discharge_change, "
                "max_daily_volume_change) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)");
  if (!statement) return std::unexpected(statement.error());
  auto& s = **statement;
  s.bind(1, site.value);
  s.bind(2, at_ms);
  s.bind(3, *first_ms_);
  s.bind(4, last_ms_);
  s.bind(5, std::string_view(*before));
  s.bind(6, std::string_view(*after));
  s.bind(7, totals.readings_changed);
  s.bind(8, totals.max_discharge_change);
  s.bind(9, totals.max_daily_volume_change);
  if (row_id_) s.bind(10, *row_id_);
  if (auto done = s.run(); !done) return done;
  if (!row_id_) {
    auto id = connection.query_int64("SELECT last_insert_rowid()");
    if (!id) return std::unexpected(id.error());
    row_id_ = *id;
  }
  return {};
}

}  // namespace stagewell
