// Reading one site's daily figures for a report, through the store's typed reads.
#include "stagewell/daily_reader.hpp"

namespace stagewell::daily {

Result<DailyReader> DailyReader::open(const Config& config, const SiteConfig& site) {
  auto zone = TimeZone::parse(config.timezone);
  if (!zone) return std::unexpected(zone.error());
  auto store = Store::open_read_only(config.database);
  if (!store) return std::unexpected(store.error());
  DailyReader reader(std::move(*store), DayCalendar(std::move(*zone)),
                     rules_for(site, config.daily));
  auto key = reader.store_.sites().find(site.id);
  if (!key) return std::unexpected(key.error());
  reader.site_ = *key;
  if (reader.site_) {
    auto current = figures_current(reader.store_, *reader.site_,
                                   settings_text(reader.calendar_, config.units, reader.rules_));
    if (!current) return std::unexpected(current.error());
    reader.stale_ = !*current;
  }
  return reader;
}

Result<std::vector<DayFigures>> DailyReader::days(Day from, Day to) {
  if (!site_) return std::vector<DayFigures>{};
  if (stale_) return compute_range(store_, *site_, calendar_, rules_, from, to);
  return store_.daily().days(*site_, from, to);
}

Result<std::optional<std::pair<Day, Day>>> DailyReader::record_days() {
  using Range = std::optional<std::pair<Day, Day>>;
  if (!site_) return Range{};
  if (!stale_) return store_.daily().day_range(*site_);
  // Stale figures: the days of the first and last reading.
  auto span = store_.readings().span(*site_);
  if (!span) return std::unexpected(span.error());
  if (!*span) return Range{};
  return Range{std::pair{calendar_.day_of((*span)->first), calendar_.day_of((*span)->second)}};
}

}  // namespace stagewell::daily
