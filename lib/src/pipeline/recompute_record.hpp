// The row of `recomputation_runs` (schema/004_history.sql, renamed by 005, 007) that describes one
// recomputation of a site: added with its first step and rewritten with each step after, inside
// the step's batch, so that it always agrees with the committed readings; marked finished in the
// batch of the last step. A run that finds its site's row of a run stopped part-way goes on with
// that row: one row per recomputation, however often it was stopped.
#pragma once

#include <cstdint>
#include <optional>
#include <vector>

#include "stagewell/recomputation.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

class RecomputeRecord {
 public:
  // A reading at `time_ms` computed with `before` now has `after`.
  void saw(ConfigVersionId before, ConfigVersionId after, std::int64_t time_ms);
  bool any() const { return first_ms_.has_value(); }
  // Goes on with row `id`, written by a run stopped part-way: its start, period and totals are
  // kept and widened by what this run does.
  void resume(std::int64_t id, const RecomputationRun& earlier);

  // Adds or rewrites the row; `finished_ms` marks it finished. REQUIRES: any(); `batch` is open
  // on `store`.
  Result<void> write(Store& store, WriteBatch& batch, SiteKey site, std::int64_t at_ms,
                     const RecomputationTotals& totals,
                     std::optional<std::int64_t> finished_ms = std::nullopt);

 private:
  std::optional<RecomputationRun> earlier_;  // the row this run goes on with, as it was found
  std::vector<ConfigVersionId> before_;  // distinct, in time order of first use
  std::vector<ConfigVersionId> after_;
  std::optional<std::int64_t> first_ms_;
  std::int64_t last_ms_ = 0;
  std::optional<std::int64_t> row_id_;
};

}  // namespace stagewell
