// The row of `recomputation_runs` (schema/004_history.sql, renamed by 005) that describes one
// recomputation of a site: inserted with its first step and rewritten with each step after, inside the step's
// transaction, so that it always agrees with the committed readings.
#pragma once

#include <cstdint>
#include <optional>
#include <vector>

#include "stagewell/recomputation.hpp"
#include "stagewell/sqlite.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

class RecomputeRecord {
 public:
  // A reading at `time_ms` computed with `before` now has `after`.
  void saw(ConfigVersionId before, ConfigVersionId after, std::int64_t time_ms);
  bool any() const { return first_ms_.has_value(); }

  // Inserts or rewrites the row. REQUIRES: any(); a write transaction open on `connection`.
  Result<void> write(sqlite::Connection& connection, SiteKey site, std::int64_t at_ms,
                     const RecomputationTotals& totals);

 private:
  std::vector<ConfigVersionId> before_;  // distinct, in time order of first use
  std::vector<ConfigVersionId> after_;
  std::optional<std::int64_t> first_ms_;
  std::int64_t last_ms_ = 0;
  std::optional<std::int64_t> row_id_;
};

}  // namespace stagewell
