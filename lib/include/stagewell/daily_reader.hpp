// Reading one site's daily figures for a report (`stagewell daily`, `stats`, `plot`): opens the
// database read-only, so a report never writes and never waits for the service.
//
// The stored figures are used when they were computed with the configuration's settings
// (daily.hpp, settings_text). Otherwise — the database predates them, or `timezone`, `units`,
// `max_gap` or `daily` changed and the service has not restarted since — the figures are computed
// from the readings for the days asked for, and stale() says so.
//
// Not thread-safe.
#pragma once

#include <optional>
#include <utility>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/daily.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell::daily {

class DailyReader {
 public:
  // REQUIRES: `site` belongs to the validated `config`. Fails (not_found) when there is no
  // database file yet.
  static Result<DailyReader> open(const Config& config, const SiteConfig& site);

  // Days `from` to `to` that have figures, in day order.
  Result<std::vector<DayFigures>> days(Day from, Day to);
  // The first and last day of the site's record; nullopt when it has no readings.
  Result<std::optional<std::pair<Day, Day>>> record_days();

  bool stale() const { return stale_; }
  const DayCalendar& calendar() const { return calendar_; }
  const DayRules& rules() const { return rules_; }
  // The site's key; nullopt when the database has never seen the site.
  std::optional<SiteKey> site() const { return site_; }
  Store& store() { return store_; }

 private:
  DailyReader(Store store, DayCalendar calendar, DayRules rules)
      : store_(std::move(store)), calendar_(std::move(calendar)), rules_(rules) {}

  Store store_;
  DayCalendar calendar_;
  DayRules rules_;
  std::optional<SiteKey> site_;
  bool stale_ = false;
};

}  // namespace stagewell::daily
