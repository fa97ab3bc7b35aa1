// Whole-site computations: the settings stored figures depend on, a full recomputation, and
// figures computed without storing them.
#include <fmt/format.h>

#include <algorithm>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

// Raised when the method itself changes, so that stored figures are recomputed on upgrade.
constexpr int kMethodVersion = 1;

// Days read and computed at a time by a full recomputation.
constexpr int kChunkDays = 7;

Result<void> delete_site_figures(sqlite::Connection& connection, SiteKey site) {
  for (const char* sql : {"DELETE FROM daily_flag_counts WHERE site_key = ?1",
                          "DELETE FROM daily_figures WHERE site_key = ?1"}) {
    auto erase = connection.cached(sql);
    if (!erase) return std::unexpected(erase.error());
    (*erase)->bind(1, site.value);
    if (auto done = (*erase)->run(); !done) return done;
  }
  return {};
}

Result<void> store_settings(sqlite::Connection& connection, SiteKey site,
                            std::string_view settings) {
  auto upsert = connection.cached(
      "INSERT INTO daily_settings (site_key, settings) VALUES (?1, ?2) "
      "ON CONFLICT (site_key) DO UPDATE SET settings = excluded.settings");
  if (!upsert) return std::unexpected(upsert.error());
  (*upsert)->bind(1, site.value);
  (*upsert)->bind(2, settings);
  return (*upsert)->run();
}

}  // namespace

std::string settings_text(const DayCalendar& calendar, units::System units, const DayRules& rules) {
  // Flag and zone names are plain ASCII without quotes (validated), so no JSON escaping is needed.
  return fmt::format(
      R"({{"method":{},"timezone":"{}","units":"{}","max_gap_ms":{},)"
      R"("excluded":"{}","bridged":"{}"}})",
      kMethodVersion, calendar.zone().name(), units::name(units), rules.max_gap_ms,
      rules.excluded.joined(), rules.bridged.joined());
}

Result<bool> figures_current(sqlite::Connection& connection, SiteKey site,
                             std::string_view settings) {
  auto select = connection.cached("SELECT settings FROM daily_settings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  return *row && (*select)->column_text(0) == settings;
}

Result<void> recompute_site(sqlite::Connection& connection, SiteKey site,
                            const DayCalendar& calendar, const DayRules& rules,
                            std::string_view settings) {
  if (auto done = delete_site_figures(connection, site); !done) return done;
  auto span = reading_span(connection, site);
  if (!span) return std::unexpected(span.error());
  if (*span) {
    // A week at a time, through one buffer: memory stays bounded whatever the record's length,
    // and the days are those compute_days() would give (first to last reading's day).
    const Day first = calendar.day_of((*span)->first);
    const Day last = calendar.day_of((*span)->second);
    std::vector<DayReading> readings;
    for (Day chunk = first; chunk <= last; chunk += kChunkDays) {
      const Day chunk_last = std::min(chunk + (kChunkDays - 1), last);
      auto read = read_readings(connection, site, calendar.start_ms(chunk) - rules.max_gap_ms,
                                calendar.start_ms(chunk_last + 1) + rules.max_gap_ms, readings);
      if (!read) return read;
      for (Day day = chunk; day <= chunk_last; ++day) {
        const DayFigures figures = compute_day(readings, day, calendar, rules);
        if (figures.empty()) continue;
        if (auto done = write_day(connection, site, figures); !done) return done;
      }
    }
  }
  return store_settings(connection, site, settings);
}

Result<std::vector<DayFigures>> compute_range(sqlite::Connection& connection, SiteKey site,
                                              const DayCalendar& calendar, const DayRules& rules,
                                              Day from, Day to) {
  std::vector<DayFigures> days;
  if (to < from) return days;
  auto readings = read_readings(connection, site, calendar.start_ms(from) - rules.max_gap_ms,
                                calendar.start_ms(to + 1) + rules.max_gap_ms);
  if (!readings) return std::unexpected(readings.error());
  for (Day day = from; day <= to; ++day) {
    DayFigures figures = compute_day(*readings, day, calendar, rules);
    if (!figures.empty()) days.push_back(std::move(figures));
  }
  return days;
}

}  // namespace stagewell::daily
