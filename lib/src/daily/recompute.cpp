// Whole-site computations: the settings stored figures depend on, a full recomputation, and
// figures computed without storing them.
#include <fmt/format.h>

#include <algorithm>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

// Raised when the method itself changes, so that stored figures are recomputed on upgrade.
// 2: the volumes of the band's ends (volume_low, volume_high).
constexpr int kMethodVersion = 2;

// Days read and computed at a time by a full recomputation.
constexpr int kChunkDays = 7;

}  // namespace

std::string settings_text(const DayCalendar& calendar, units::System units, const DayRules& rules) {
  // Flag and zone names are plain ASCII without quotes (validated), so no JSON escaping is needed.
  return fmt::format(R"({{"method":{},"timezone":"{}","units":"{}","max_gap_ms":{},)"
                     R"("excluded":"{}","bridged":"{}"}})",
                     kMethodVersion, calendar.zone().name(), units::name(units), rules.max_gap_ms,
                     rules.excluded.joined(), rules.bridged.joined());
}

Result<bool> figures_current(Store& store, SiteKey site, std::string_view settings) {
  auto stored = store.daily().settings(site);
  if (!stored) return std::unexpected(stored.error());
  return *stored && **stored == settings;
}

Result<void> recompute_site(Store& store, WriteBatch& batch, SiteKey site,
                            const DayCalendar& calendar, const DayRules& rules,
                            std::string_view settings) {
  auto table = store.daily();
  if (auto done = table.erase_site(batch, site); !done) return done;
  auto span = store.readings().span(site);
  if (!span) return std::unexpected(span.error());
  if (*span) {
    // A week at a time, through one buffer: memory stays bounded whatever the record's length,
    // and the days are those compute_days() would give (first to last reading's day).
    const Day first = calendar.day_of((*span)->first);
    const Day last = calendar.day_of((*span)->second);
    std::vector<DayReading> readings;
    for (Day chunk = first; chunk <= last; chunk += kChunkDays) {
      const Day chunk_last = std::min(chunk + (kChunkDays - 1), last);
      auto read = store.readings().day_readings(
          site, calendar.start_ms(chunk) - rules.max_gap_ms,
          calendar.start_ms(chunk_last + 1) + rules.max_gap_ms, readings);
      if (!read) return read;
      for (Day day = chunk; day <= chunk_last; ++day) {
        const DayFigures figures = compute_day(readings, day, calendar, rules);
        if (figures.empty()) continue;
        if (auto done = table.write_day(batch, site, figures); !done) return done;
      }
    }
  }
  return table.set_settings(batch, site, settings);
}

Result<std::vector<DayFigures>> compute_range(Store& store, SiteKey site,
                                              const DayCalendar& calendar, const DayRules& rules,
                                              Day from, Day to) {
  if (to < from) return std::vector<DayFigures>{};
  // One statement, so one snapshot of the readings even while the service writes; the readings
  // held at a time are a stretch and the days being computed, however long the period.
  DaySweep sweep(calendar, rules, from, to);
  auto read = store.readings().scan_day_readings(
      site, calendar.start_ms(from) - rules.max_gap_ms,
      calendar.start_ms(to + 1) + rules.max_gap_ms,
      [&](std::span<const DayReading> readings) { sweep.add(readings); });
  if (!read) return std::unexpected(read.error());
  return sweep.finish();
}

}  // namespace stagewell::daily
