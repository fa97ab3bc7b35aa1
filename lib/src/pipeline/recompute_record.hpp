// The row of `recomputation_runs` (schema/004_history.sql, renamed by 005) that describes one
// recomputation of a site: added with its first step and rewritten with each step after, inside
// the step's batch, so that it always agrees with the committed readings.
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

  // Adds or rewrites the row. REQUIRES: any(); `batch` is open on `store`.
  Result<void> write(Store& store, WriteBatch& batch, SiteKey site, std::int64_t at_ms,
                     const RecomputationTotals& totals);

 private:
  std::vector<ConfigVersionId> before_;  // distinct, in time order of first use
  std::vector<ConfigVersionId> after_;
  std::optional<std::int64_t> first_ms_;
  std::int64_t last_ms_ = 0;
  std::optional<std::int64_t> row_id_;
};

}  // namespace stagewell
