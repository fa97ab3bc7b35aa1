// Daily figures: for each site and local calendar day, the volume that ran through, the mean,
// lowest and highest discharge, how much of the day had data, and how many readings were flagged.
//
// Definitions (README, "Daily figures", copies these):
//   day        [start, end): from local midnight to the next, in the configuration's `timezone`
//              (an IANA zone, whose DST days last 23 or 25 hours, or a fixed offset). Where a
//              zone skips midnight, the day starts at the first instant that exists.
//   used       a reading whose discharge the figures use: none of its flags is excluded or
//              bridged (DailySpec), and it has a discharge. A reading without one (out_of_range)
//              counts as excluded unless one of its flags is bridged.
//   interval   two used readings in time order with no excluded reading between them (bridged
//              readings between them are ignored). An interval longer than the site's max_gap is
//              not integrated: that time is missing. Exactly max_gap is integrated.
//   volume     the trapezoidal integral of discharge over the intervals, each cut at the day's
//              bounds with discharge linearly interpolated there. m^3 or ft^3. Empty when no time
//              of the day is covered.
//   coverage   integrated time / length of the day, 0 to 1.
//   mean       volume / integrated time. Empty when no time is covered.
//   min, max   the lowest and highest discharge of the used readings timed within the day, with
//              their times (the earliest of equal values). Interpolated values at the day's bounds
//              are not candidates. Empty when the day has no used reading.
//   readings   every stored reading timed within the day, used or not; flagged: those with any
//              flag; flag_counts: per flag.
// A day with no reading and no covered time has no figures (no row).
//
// Discharge is in the configuration's unit system (m^3/s or ft^3/s) as stored; times are
// milliseconds since the Unix epoch, UTC.
#pragma once

#include <cctz/civil_time.h>

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/sqlite.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::daily {

using Day = cctz::civil_day;

// 'YYYY-MM-DD'.
std::string format_day(Day day);
// Parses 'YYYY-MM-DD' (a real date); nullopt otherwise.
std::optional<Day> parse_day(std::string_view text);

// The local calendar days of one time zone. Copyable; cheap.
class DayCalendar {
 public:
  explicit DayCalendar(TimeZone zone) : zone_(std::move(zone)) {}

  // The first instant of `day`, ms since the epoch.
  std::int64_t start_ms(Day day) const;
  // The day whose [start, end) holds `time_ms`.
  Day day_of(std::int64_t time_ms) const;
  const TimeZone& zone() const { return zone_; }

 private:
  TimeZone zone_;
};

// How one site's readings become figures.
struct DayRules {
  std::int64_t max_gap_ms = 3'600'000;  // longer intervals are not integrated
  Flags excluded = Flag::out_of_range;
  Flags bridged = Flag::spike;
};

DayRules rules_for(const SiteConfig& site, const DailySpec& daily);

// A stored reading as the figures need it.
struct DayReading {
  std::int64_t time_ms = 0;
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
};

struct FlagCount {
  Flag flag = Flag::gap;
  std::int64_t readings = 0;
  friend bool operator==(const FlagCount&, const FlagCount&) = default;
};

struct DayFigures {
  Day day;
  std::int64_t start_ms = 0;
  std::int64_t end_ms = 0;
  std::optional<double> volume;          // m^3 or ft^3
  std::optional<double> mean_discharge;  // m^3/s or ft^3/s
  std::optional<double> min_discharge;
  std::optional<std::int64_t> min_time_ms;
  std::optional<double> max_discharge;
  std::optional<std::int64_t> max_time_ms;
  std::int64_t covered_ms = 0;
  double coverage = 0.0;  // covered_ms / (end_ms - start_ms)
  std::int64_t readings = 0;
  std::int64_t flagged = 0;
  std::vector<FlagCount> flag_counts;  // in flag order; only flags that occur

  std::int64_t length_ms() const { return end_ms - start_ms; }
  bool complete() const { return covered_ms == end_ms - start_ms; }
  bool empty() const { return readings == 0 && covered_ms == 0; }  // such a day has no row
  friend bool operator==(const DayFigures&, const DayFigures&) = default;
};

// The figures of one day.
// REQUIRES: `readings` in strictly increasing time order, holding every reading of the site timed
// in [start_ms - max_gap_ms, end_ms + max_gap_ms] (more is harmless).
DayFigures compute_day(std::span<const DayReading> readings, Day day, const DayCalendar& calendar,
                       const DayRules& rules);

// The figures of every day of `readings` (sorted), from the day of the first to the day of the
// last, leaving out empty days. What a full recomputation stores.
std::vector<DayFigures> compute_days(std::span<const DayReading> readings,
                                     const DayCalendar& calendar, const DayRules& rules);

// ---- The tables (schema/002_daily.sql) ----

// The key of site `id`, when the database knows it.
Result<std::optional<SiteKey>> find_site(sqlite::Connection& connection, std::string_view id);

// The site's readings timed in [from_ms, to_ms], in time order.
Result<std::vector<DayReading>> read_readings(sqlite::Connection& connection, SiteKey site,
                                              std::int64_t from_ms, std::int64_t to_ms);
// The same into `out`, which is cleared first and whose capacity is reused: callers that read
// one stretch after another keep one buffer (growing a vector of a week of readings anew each
// time costs more than reading them).
Result<void> read_readings(sqlite::Connection& connection, SiteKey site, std::int64_t from_ms,
                           std::int64_t to_ms, std::vector<DayReading>& out);
// The times of the site's first and last reading; nullopt when it has none.
Result<std::optional<std::pair<std::int64_t, std::int64_t>>> reading_span(
    sqlite::Connection& connection, SiteKey site);

// Stores one day's figures, replacing what was stored; deletes the row of an empty day.
// REQUIRES: a write transaction is open on `connection`.
Result<void> write_day(sqlite::Connection& connection, SiteKey site, const DayFigures& figures);

// The stored figures of days `from` to `to` (inclusive), in day order.
Result<std::vector<DayFigures>> read_days(sqlite::Connection& connection, SiteKey site, Day from,
                                          Day to);
// The first and last day with stored figures; nullopt when the site has none.
Result<std::optional<std::pair<Day, Day>>> stored_day_range(sqlite::Connection& connection,
                                                            SiteKey site);

// The settings figures are computed with, as stored in daily_settings: any change to them means
// the stored figures are stale.
std::string settings_text(const DayCalendar& calendar, units::System units, const DayRules& rules);
// True when the site's stored figures were computed with `settings`.
Result<bool> figures_current(sqlite::Connection& connection, SiteKey site,
                             std::string_view settings);

// Replaces all of a site's figures with a full recomputation from its readings, and records the
// settings. REQUIRES: a write transaction is open on `connection`.
Result<void> recompute_site(sqlite::Connection& connection, SiteKey site,
                            const DayCalendar& calendar, const DayRules& rules,
                            std::string_view settings);

// Days `from` to `to` computed from the readings, without storing anything (for a reader whose
// stored figures are stale). Leaves out empty days.
Result<std::vector<DayFigures>> compute_range(sqlite::Connection& connection, SiteKey site,
                                              const DayCalendar& calendar, const DayRules& rules,
                                              Day from, Day to);

}  // namespace stagewell::daily
