// The `readings` table, beyond the ingest's own writes (WriteBatch::insert and add_flags): the
// reads the checks, the daily figures, the plots, the recomputation and the HTTP answers need,
// and the recomputation's rewrites of stored readings.
//
// A thin handle on its store's connection (Store::readings()): reads see the writes of the batch
// open on that store. Ranges are one range of the table's primary key (site, time): bounded.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <span>
#include <utility>
#include <vector>

#include "stagewell/daily_rows.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

namespace plot {
// A stored reading as a hydrograph draws it.
struct PlotReading {
  std::int64_t time_ms = 0;
  double stage = 0.0;               // stage units, as read
  std::optional<double> discharge;  // stored unit (m^3/s or ft^3/s); empty when out_of_range
  Flags flags;
  std::optional<double> band = std::nullopt;  // relative expanded uncertainty (uncertainty.hpp)
};
}  // namespace plot

// The first and last time of something, ms (both included).
using TimeSpan = std::pair<std::int64_t, std::int64_t>;

class ReadingsTable : store_detail::TableHandle {
 public:
  // The last `count` readings of `site` at or before `at_or_before_ms`, oldest first (to restore
  // the state of a site's checks and alarms; count 1 is the latest reading).
  Result<std::vector<StoredReading>> recent(SiteKey site, std::int64_t at_or_before_ms,
                                            std::size_t count);
  // The stage stored for `site` at `time_ms`, empty when there is none: the ingest path settles a
  // repeat of a stored (site, time) with it before the reading reaches the checks.
  Result<std::optional<double>> stage_at(SiteKey site, std::int64_t time_ms);

  // Number of stored readings, of all sites or of one (a scan: not for the hot path), and of one
  // site in [from_ms, to_ms].
  Result<std::int64_t> count();
  Result<std::int64_t> count(SiteKey site);
  Result<std::int64_t> count(SiteKey site, std::int64_t from_ms, std::int64_t to_ms);
  // The times of the site's first and last reading; nullopt when it has none.
  Result<std::optional<TimeSpan>> span(SiteKey site);

  // The site's readings in [from_ms, to_ms], in time order, at most `max_rows` of them, into
  // `out` (cleared first).
  Result<void> range(SiteKey site, std::int64_t from_ms, std::int64_t to_ms, std::size_t max_rows,
                     std::vector<StoredReading>& out);
  // The site's readings in [from_ms, to_ms] as the daily figures need them, into `out`, which is
  // cleared first and whose capacity is reused (callers that read one stretch after another keep
  // one buffer: growing a vector of a week of readings anew costs more than reading them).
  Result<void> day_readings(SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
                            std::vector<daily::DayReading>& out);
  Result<std::vector<daily::DayReading>> day_readings(SiteKey site, std::int64_t from_ms,
                                                      std::int64_t to_ms);
  // The readings day_readings() gives, handed to `take` a stretch at a time, in time order: one
  // statement (one snapshot of the table) in bounded memory, and for a year of readings about 1.6
  // times as fast as day_readings() into one vector, since SQLite hands the rows to an aggregate
  // of the store's own rather than returning them one at a time (day_readings_scan.cpp). For the
  // reports that compute their figures from a year of readings. `take` runs while the statement
  // does, so it must not use this store; what it throws is rethrown once the statement has stopped.
  Result<void> scan_day_readings(
      SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
      const std::function<void(std::span<const daily::DayReading>)>& take);
  // The site's readings in [from_ms, to_ms), as a hydrograph draws them.
  Result<std::vector<plot::PlotReading>> plot_readings(SiteKey site, std::int64_t from_ms,
                                                       std::int64_t to_ms);
  // The first and last reading of [from_ms, to_ms) computed with another version than `version`.
  Result<std::optional<TimeSpan>> mismatched(SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
                                             ConfigVersionId version);

  // Rewrites of stored readings (their stage never changes). Each counts as a change of stored
  // readings for Store::stored_readings_changed once its batch commits: whoever keeps copies of
  // stored readings must read them again.
  // REQUIRES: `batch` is open on this table's store.
  // New depth, discharge, flags and version for the reading of `site` at `time_ms`.
  Result<void> rewrite(WriteBatch& batch, SiteKey site, std::int64_t time_ms,
                       const ComputedReading& values);
  // ORs `flags` into the reading of `site` at `time_ms` (nothing when there is none).
  Result<void> rewrite_flags(WriteBatch& batch, SiteKey site, std::int64_t time_ms, Flags flags);

 private:
  using TableHandle::TableHandle;
};

}  // namespace stagewell
