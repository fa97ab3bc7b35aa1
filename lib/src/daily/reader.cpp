#include <fmt/format.h>

#include "stagewell/daily_reader.hpp"

namespace stagewell::daily {

Result<DailyReader> DailyReader::open(const Config& config, const SiteConfig& site) {
  auto zone = TimeZone::parse(config.timezone);
  if (!zone) return std::unexpected(zone.error());
  auto store = Store::open_read_only(config.database);
  if (!store) return std::unexpected(store.error());
  DailyReader reader(std::move(*store), DayCalendar(std::move(*zone)),
                     rules_for(site, config.daily));
  auto key = find_site(reader.store_.connection(), site.id);
  if (!key) return std::unexpected(key.error());
  reader.site_ = *key;
  if (reader.site_) {
    auto current = figures_current(reader.store_.connection(), *reader.site_,
                                   settings_text(reader.calendar_, config.units, reader.rules_));
    if (!current) return std::unexpected(current.error());
    reader.stale_ = !*current;
  }
  return reader;
}

Result<std::vector<DayFigures>> DailyReader::days(Day from, Day to) {
  if (!site_) return std::vector<DayFigures>{};
  if (stale_) return compute_range(store_.connection(), *site_, calendar_, rules_, from, to);
  return read_days(store_.connection(), *site_, from, to);
}

Result<std::optional<std::pair<Day, Day>>> DailyReader::record_days() {
  using Range = std::optional<std::pair<Day, Day>>;
  if (!site_) return Range{};
  if (!stale_) return stored_day_range(store_.connection(), *site_);
  // Stale figures: the days of the first and last reading.
  auto select = store_.connection().cached(
      "SELECT min(time_ms), max(time_ms) FROM readings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site_->value);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row || (*select)->column_is_null(0)) return Range{};
  return Range{std::pair{calendar_.day_of((*select)->column_int64(0)),
                         calendar_.day_of((*select)->column_int64(1))}};
}

}  // namespace stagewell::daily
