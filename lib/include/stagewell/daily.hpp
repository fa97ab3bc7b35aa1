// Daily figures: for each site and local calendar day, the volume that ran through, the mean,
// lowest and highest discharge, how much of the day had data, and how many readings were flagged.
//
// Definitions (docs/daily-and-statistics.md, "Definitions", copies these):
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

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/daily_rows.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::daily {

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

// The figures of one day.
// REQUIRES: `readings` in strictly increasing time order, holding every reading of the site timed
// in [start_ms - max_gap_ms, end_ms + max_gap_ms] (more is harmless).
DayFigures compute_day(std::span<const DayReading> readings, Day day, const DayCalendar& calendar,
                       const DayRules& rules);

// The figures of every day of `readings` (sorted), from the day of the first to the day of the
// last, leaving out empty days. What a full recomputation stores.
std::vector<DayFigures> compute_days(std::span<const DayReading> readings,
                                     const DayCalendar& calendar, const DayRules& rules);

// Days `first` to `last` computed from readings that arrive a stretch at a time, in time order (as
// ReadingsTable::scan_day_readings hands them over): the figures compute_day() gives, each day
// computed as soon as the readings reach more than max_gap past its end, and only the readings
// the days still to come can need are kept (a day and max_gap either side, and one stretch).
// Not thread-safe.
class DaySweep {
 public:
  DaySweep(DayCalendar calendar, const DayRules& rules, Day first, Day last);

  // REQUIRES: times strictly increase, from one call to the next too; all the calls together give
  // every reading of the site within max_gap of the days (more is harmless).
  void add(std::span<const DayReading> readings);
  // Computes the days not yet computed (no more readings are coming) and returns every day that
  // has figures, in day order. The sweep is spent.
  std::vector<DayFigures> finish();

 private:
  void compute_next_day();

  DayCalendar calendar_;
  DayRules rules_;
  Day next_;  // the next day to compute
  Day last_;
  std::int64_t next_end_ms_ = 0;  // where next_ ends
  std::vector<DayReading> readings_;
  std::size_t first_kept_ = 0;  // readings_ before it are needed by no day still to come
  std::vector<DayFigures> days_;
};

// ---- Stored figures (the store's DailyTable keeps them) ----

// The settings figures are computed with, as stored in daily_settings: any change to them means
// the stored figures are stale.
std::string settings_text(const DayCalendar& calendar, units::System units, const DayRules& rules);
// True when the site's stored figures were computed with `settings`.
Result<bool> figures_current(Store& store, SiteKey site, std::string_view settings);

// Replaces all of a site's figures with a full recomputation from its readings, and records the
// settings, in `batch`. REQUIRES: `batch` is open on `store`.
Result<void> recompute_site(Store& store, WriteBatch& batch, SiteKey site,
                            const DayCalendar& calendar, const DayRules& rules,
                            std::string_view settings);

// Days `from` to `to` computed from the readings, without storing anything (for a reader whose
// stored figures are stale). Leaves out empty days.
Result<std::vector<DayFigures>> compute_range(Store& store, SiteKey site,
                                              const DayCalendar& calendar, const DayRules& rules,
                                              Day from, Day to);

}  // namespace stagewell::daily
