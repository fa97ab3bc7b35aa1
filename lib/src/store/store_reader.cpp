// The reader for another thread: a read-only Store of its own, asked only what the HTTP answers
// need.
#include "stagewell/store_reader.hpp"

#include <limits>

namespace stagewell {

Result<StoreReader> StoreReader::open(const std::filesystem::path& path,
                                      const StoreOptions& options) {
  auto store = Store::open_read_only(path, options);
  if (!store) return std::unexpected(store.error());
  return StoreReader(std::move(*store));
}

Result<std::optional<SiteKey>> StoreReader::find_site(std::string_view id) {
  return store_.sites().find(id);
}

Result<std::optional<StoredReading>> StoreReader::latest_reading(SiteKey site) {
  auto latest = store_.readings().recent(site, std::numeric_limits<std::int64_t>::max(), 1);
  if (!latest) return std::unexpected(latest.error());
  if (latest->empty()) return std::optional<StoredReading>{};
  return std::optional<StoredReading>(latest->front());
}

Result<std::vector<StoredReading>> StoreReader::readings(SiteKey site, std::int64_t from_ms,
                                                         std::int64_t to_ms, std::size_t max_rows) {
  std::vector<StoredReading> out;
  auto read = store_.readings().range(site, from_ms, to_ms, max_rows, out);
  if (!read) return std::unexpected(read.error());
  return out;
}

Result<std::vector<daily::DayFigures>> StoreReader::days(SiteKey site, daily::Day from,
                                                         daily::Day to) {
  return store_.daily().days(site, from, to);
}

Result<std::vector<alarms::AlarmRecord>> StoreReader::open_alarms() {
  return store_.alarms().open();
}

Result<std::vector<alarms::AlarmState>> StoreReader::alarm_states(std::size_t max_rows) {
  return store_.alarms().states(max_rows);
}

Result<bool> StoreReader::has_alarms() { return store_.alarms().available(); }

Result<std::vector<SourceProgress>> StoreReader::progress(std::size_t max_rows) {
  return store_.progress().latest(max_rows);
}

}  // namespace stagewell
