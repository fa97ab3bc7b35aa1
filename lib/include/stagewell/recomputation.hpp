// Recomputing stored readings whose configuration version is not the one their period now has
// (site_history.hpp): after a change of a site's history or corrections, the readings of the
// periods concerned — and only those — get new depth, discharge and flags, and the daily figures
// of the local days they touch are refreshed. Each recomputation of a site is recorded in the
// `recomputation_runs` table (the `recomputations` view).
//
// Work is done in bounded steps, one transaction each, so that a caller sharing the store (the
// daemon's ingest) can commit its own batches between them; it notices the rewritten readings by
// itself (Store::stored_readings_changed). The stored raw stage is never changed.
//
// The checks are re-run in time order over the period, seeded with the readings before it; the
// arrival-dependent flags `late` and `future` are kept as stored (a `future` reading changes no
// check state, as at ingest). Readings after the period keep their flags.
//
// Idempotent: a recomputed reading carries its period's version, so a second run over the same
// configuration finds nothing to do and records nothing.
//
// Not thread-safe. REQUIRES: the Config outlives the Recomputation.
#pragma once

#include <cstdint>
#include <limits>
#include <memory>
#include <optional>

#include "stagewell/config.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

struct RecomputationTotals {
  std::int64_t readings_in_period = 0;   // stored readings from the first to the last to redo
  std::int64_t readings_walked = 0;      // of those, done so far
  std::int64_t readings_recomputed = 0;  // given their period's version (it was another)
  std::int64_t readings_changed = 0;     // whose depth, discharge or flags changed
  double max_discharge_change = 0.0;     // largest |new - old|, m^3/s or ft^3/s
  std::int64_t days_refreshed = 0;       // local days whose figures were recomputed
  double max_daily_volume_change = 0.0;  // largest |new - old| volume of those days, m^3 or ft^3
  std::optional<std::int64_t> period_from_ms;  // first reading to redo (ms since epoch, UTC)
  std::optional<std::int64_t> period_to_ms;    // last reading to redo, included
};

class Recomputation {
 public:
  // Finds the readings of `site_id` timed in [from_ms, to_ms) that were computed with another
  // version than their period's. Records the periods' versions.
  // REQUIRES: a site of `config`; no write batch open on `store`.
  static Result<std::unique_ptr<Recomputation>> plan(
      Store& store, const Config& config, std::string_view site_id, std::int64_t now_ms,
      std::int64_t from_ms = std::numeric_limits<std::int64_t>::min(),
      std::int64_t to_ms = std::numeric_limits<std::int64_t>::max());
  ~Recomputation();

  // True when nothing is left to do.
  bool done() const;
  // Recomputes the next `max_readings` readings of the period, and the daily figures they touch,
  // in one transaction. After a failure nothing of the step is stored and the Recomputation must
  // not be used again (plan anew: the work left is found again).
  // REQUIRES: no write batch open on `store`.
  Result<void> step(Store& store, std::int64_t max_readings);

  const RecomputationTotals& totals() const;
  const std::string& site_id() const;

 private:
  struct State;
  explicit Recomputation(std::unique_ptr<State> state);
  std::unique_ptr<State> state_;
};

}  // namespace stagewell
