#include "recompute_record.hpp"

#include <algorithm>

namespace stagewell {
namespace {

void add_distinct(std::vector<ConfigVersionId>& list, ConfigVersionId id) {
  if (std::find(list.begin(), list.end(), id) == list.end()) list.push_back(id);
}

// "hash1,hash2": the versions' short names (config_versions.hash).
Result<std::string> hashes(Store& store, const std::vector<ConfigVersionId>& ids) {
  std::string out;
  for (const ConfigVersionId id : ids) {
    auto hash = store.versions().hash(id);
    if (!hash) return std::unexpected(hash.error());
    if (*hash) out += (out.empty() ? "" : ",") + **hash;
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

Result<void> RecomputeRecord::write(Store& store, WriteBatch& batch, SiteKey site,
                                    std::int64_t at_ms, const RecomputationTotals& totals) {
  auto before = hashes(store, before_);
  if (!before) return std::unexpected(before.error());
  auto after = hashes(store, after_);
  if (!after) return std::unexpected(after.error());
  const RecomputationRun run{.site = site,
                             .at_ms = at_ms,
                             .period_from_ms = *first_ms_,
                             .period_to_ms = last_ms_,
                             .config_before = std::move(*before),
                             .config_after = std::move(*after),
                             .readings_changed = totals.readings_changed,
                             .max_discharge_change = totals.max_discharge_change,
                             .max_daily_volume_change = totals.max_daily_volume_change};
  auto runs = store.recomputation_runs();
  if (row_id_) return runs.update(batch, *row_id_, run);
  auto id = runs.add(batch, run);
  if (!id) return std::unexpected(id.error());
  row_id_ = *id;
  return {};
}

}  // namespace stagewell
