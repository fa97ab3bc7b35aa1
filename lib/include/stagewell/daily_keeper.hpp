// Keeps the daily figures (daily.hpp) current while readings are stored. The ingest pipeline
// tells the keeper of every reading it stores (stored()) and every flag it adds to a stored
// reading (flagged()), and calls update() just before it commits: the (site, local day)s those
// changes can affect are recomputed inside the same transaction, so the `daily` view never
// disagrees with the committed readings.
//
// A reading at time t can change only the days that overlap [t - max_gap, t + max_gap]: an
// interval longer than max_gap is never integrated, so no change reaches further.
//
// Readings the batch itself stored after the latest reading stored before it (the usual case:
// data arriving in time order) are taken from memory rather than read back from the database;
// everything else is read from the database. The keeper knows which is which only while nothing
// but its own batches changes the stored readings: its owner asks the store
// (Store::stored_readings_changed) and calls forget() when something else did — another process,
// or a recomputation on the same store — so that it reads everything back once.
//
// Not thread-safe: it belongs to the Ingestor that owns the store.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/daily.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell::daily {

class DailyKeeper {
 public:
  // REQUIRES: a validated configuration (its timezone is known).
  static Result<DailyKeeper> create(const Config& config);

  // Registers a site. When its stored figures were computed with other settings (or never), they
  // are all recomputed from its readings first, in a transaction of their own.
  // REQUIRES: no write batch is open on `store`.
  Result<void> add_site(Store& store, SiteKey key, const SiteConfig& site);

  // A new reading of `site` was stored in the open batch (InsertOutcome::stored), with these
  // discharge and flags. REQUIRES: the site was added.
  void stored(SiteKey site, const DayReading& reading);
  // `flags` were added to the stored reading of `site` at `time_ms` in the open batch.
  void flagged(SiteKey site, std::int64_t time_ms, Flags flags);

  // Recomputes every day the changes since the last update() or forget() can affect, in `batch`,
  // and forgets the changes. REQUIRES: `batch` is open on `store`, holding those changes. On
  // failure the batch cannot be committed (the caller rolls it back and calls forget()).
  Result<void> update(Store& store, WriteBatch& batch);

  // Forgets the changes and what is known of the stored readings: the batch was rolled back, its
  // commit failed, or the stored readings changed otherwise than through this keeper's batches
  // (Store::stored_readings_changed).
  void forget();

  const DayCalendar& calendar() const { return calendar_; }

 private:
  struct Site {
    DayRules rules;
    std::vector<DayReading> added;                          // stored in the open batch
    std::vector<std::pair<std::int64_t, Flags>> reflagged;  // flags added in the open batch
    // The latest reading time in the database before the open batch; nullopt when unknown (then
    // everything is read back).
    std::optional<std::int64_t> stored_until_ms;
    // A copy of the stored readings of [tail_from_ms, stored_until_ms] (sorted, flags current),
    // kept from the last update so that readings arriving in time order never read the open day
    // back from the database. Valid only while stored_until_ms is known and tail_from_ms is set.
    std::vector<DayReading> tail;
    std::optional<std::int64_t> tail_from_ms;
  };
  DailyKeeper(DayCalendar calendar, units::System units, DailySpec daily)
      : calendar_(std::move(calendar)), units_(units), daily_(daily) {}
  Result<void> update_site(Store& store, WriteBatch& batch, SiteKey key, Site& site);
  // The readings of [from_ms, to_ms] as the open transaction holds them, into buffer_.
  // Keeps, as the site's tail, the readings of buffer_ the next in-order batch will need.
  void keep_tail(Site& site, std::int64_t gathered_from_ms, std::int64_t gathered_to_ms,
                 bool gathered);
  Result<void> gather(Store& store, SiteKey key, Site& site, std::int64_t from_ms,
                      std::int64_t to_ms);

  DayCalendar calendar_;
  units::System units_;
  DailySpec daily_;
  std::map<SiteKey, Site> sites_;
  std::vector<DayReading> buffer_;  // reused by every update (ReadingsTable::day_readings)
};

}  // namespace stagewell::daily
