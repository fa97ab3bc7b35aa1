// Reading the database on a thread of its own (the HTTP answers): one StoreReader per thread, each
// with its own read-only connection, sharing nothing with the writer or with another reader. It
// never writes and never takes the write lock, so it never waits for the writer (WAL mode); it
// waits only in rare cases (a checkpoint resetting the log), as its StoreOptions say.
//
// Every query is bounded: one site's rows over a range with a row limit, one row per site, or a
// limited list.
//
// Not thread-safe: it belongs to the thread that opened it (or one thread at a time).
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <string_view>
#include <vector>

#include "stagewell/alarm_rows.hpp"
#include "stagewell/daily_rows.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

class StoreReader {
 public:
  // Opens the database read-only. REQUIRES: it exists at the current schema version.
  static Result<StoreReader> open(const std::filesystem::path& path,
                                  const StoreOptions& options = {});

  // The key of site `id`; nullopt when the database has never seen it.
  Result<std::optional<SiteKey>> find_site(std::string_view id);
  // The site's latest reading; nullopt when it has none.
  Result<std::optional<StoredReading>> latest_reading(SiteKey site);
  // The site's readings in [from_ms, to_ms], in time order, at most `max_rows`.
  Result<std::vector<StoredReading>> readings(SiteKey site, std::int64_t from_ms,
                                              std::int64_t to_ms, std::size_t max_rows);
  // The site's stored daily figures of days `from` to `to` (inclusive), in day order.
  Result<std::vector<daily::DayFigures>> days(SiteKey site, daily::Day from, daily::Day to);
  // The alarms open now, of every site, ordered by site id and raise time.
  Result<std::vector<alarms::AlarmRecord>> open_alarms();
  // For each site and kind ever raised, whether one is open now (at most `max_rows`).
  Result<std::vector<alarms::AlarmState>> alarm_states(std::size_t max_rows);
  // Whether the database has the alarms at all.
  Result<bool> has_alarms();
  // The `max_rows` sources whose progress was written most recently, newest first.
  Result<std::vector<SourceProgress>> progress(std::size_t max_rows);

 private:
  explicit StoreReader(Store store) : store_(std::move(store)) {}
  Store store_;  // opened read-only
};

}  // namespace stagewell
