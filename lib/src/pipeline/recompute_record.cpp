#include "recompute_record.hpp"

#include <algorithm>
#include <string>
#include <string_view>
#include <utility>

namespace stagewell {
namespace {

void add_distinct(std::vector<ConfigVersionId>& list, ConfigVersionId id) {
  if (std::find(list.begin(), list.end(), id) == list.end()) list.push_back(id);
}

// Appends `hash` to the comma-separated `list` unless it is there already.
void add_hash(std::string& list, std::string_view hash) {
  std::string_view rest = list;
  while (!rest.empty()) {
    const auto comma = rest.find(',');
    if (rest.substr(0, comma) == hash) return;
    rest = comma == std::string_view::npos ? std::string_view() : rest.substr(comma + 1);
  }
  if (!list.empty()) list += ',';
  list += hash;
}

// "hash1,hash2": the versions' short names (config_versions.hash), after those of `earlier`.
Result<std::string> hashes(Store& store, std::string earlier,
                           const std::vector<ConfigVersionId>& ids) {
  std::string out = std::move(earlier);
  for (const ConfigVersionId id : ids) {
    auto hash = store.versions().hash(id);
    if (!hash) return std::unexpected(hash.error());
    if (*hash) add_hash(out, **hash);
  }
  return out;
}

}  // namespace

void RecomputeRecord::saw(ConfigVersionId before, ConfigVersionId after, std::int64_t time_ms) {
  add_distinct(before_, before);
  add_distinct(after_, after);
  last_ms_ = first_ms_ ? std::max(last_ms_, time_ms) : time_ms;
  first_ms_ = std::min(first_ms_.value_or(time_ms), time_ms);
}

void RecomputeRecord::resume(std::int64_t id, const RecomputationRun& earlier) {
  row_id_ = id;
  earlier_ = earlier;
  first_ms_ = earlier.period_from_ms;
  last_ms_ = earlier.period_to_ms;
}

Result<void> RecomputeRecord::write(Store& store, WriteBatch& batch, SiteKey site,
                                    std::int64_t at_ms, const RecomputationTotals& totals,
                                    std::optional<std::int64_t> finished_ms) {
  const RecomputationRun none{};
  const RecomputationRun& earlier = earlier_ ? *earlier_ : none;
  auto before = hashes(store, earlier.config_before, before_);
  if (!before) return std::unexpected(before.error());
  auto after = hashes(store, earlier.config_after, after_);
  if (!after) return std::unexpected(after.error());
  const RecomputationRun run{
      .site = site,
      .at_ms = earlier_ ? earlier_->at_ms : at_ms,
      .period_from_ms = *first_ms_,
      .period_to_ms = last_ms_,
      .config_before = std::move(*before),
      .config_after = std::move(*after),
      .readings_changed = earlier.readings_changed + totals.readings_changed,
      .max_discharge_change = std::max(earlier.max_discharge_change, totals.max_discharge_change),
      .max_daily_volume_change =
          std::max(earlier.max_daily_volume_change, totals.max_daily_volume_change),
      .finished_ms = finished_ms};
  auto runs = store.recomputation_runs();
  if (row_id_) return runs.update(batch, *row_id_, run);
  auto id = runs.add(batch, run);
  if (!id) return std::unexpected(id.error());
  row_id_ = *id;
  return {};
}

}  // namespace stagewell
