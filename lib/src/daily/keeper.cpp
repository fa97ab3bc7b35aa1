// Keeping the daily figures current: which days a batch touched, the readings of those days, and
// recomputing them.
#include <algorithm>
#include <limits>

#include "stagewell/daily_keeper.hpp"

namespace stagewell::daily {
namespace {

constexpr std::int64_t kNoReadings = std::numeric_limits<std::int64_t>::min();

// The site's latest reading time as the store sees it; kNoReadings when it has none.
Result<std::int64_t> latest_reading_ms(Store& store, SiteKey site) {
  auto span = store.readings().span(site);
  if (!span) return std::unexpected(span.error());
  return *span ? (*span)->second : kNoReadings;
}

bool by_time(const DayReading& a, const DayReading& b) { return a.time_ms < b.time_ms; }

}  // namespace

Result<DailyKeeper> DailyKeeper::create(const Config& config) {
  auto zone = TimeZone::parse(config.timezone);
  if (!zone) return std::unexpected(zone.error());
  return DailyKeeper(DayCalendar(std::move(*zone)), config.units, config.daily);
}

Result<void> DailyKeeper::add_site(Store& store, SiteKey key, const SiteConfig& site) {
  Site& entry = sites_[key];
  entry.rules = rules_for(site, daily_);
  const std::string settings = settings_text(calendar_, units_, entry.rules);
  auto current = figures_current(store, key, settings);
  if (!current) return std::unexpected(current.error());
  if (!*current) {
    auto batch = store.begin();
    if (!batch) return std::unexpected(batch.error());
    auto done = recompute_site(store, *batch, key, calendar_, entry.rules, settings);
    if (!done) return done;  // the batch rolls back as it goes out of scope
    if (auto committed = batch->commit(); !committed) return committed;
  }
  // What is stored now, so that the first batch need not read its own readings back. A commit by
  // another connection after this is the owner's to notice (forget()).
  auto latest = latest_reading_ms(store, key);
  if (!latest) return std::unexpected(latest.error());
  entry.stored_until_ms = *latest;
  entry.tail.clear();  // nothing read yet: the first update reads the open day back
  entry.tail_from_ms.reset();
  return {};
}

void DailyKeeper::stored(SiteKey site, const DayReading& reading) {
  const auto found = sites_.find(site);
  if (found != sites_.end()) found->second.added.push_back(reading);
}

void DailyKeeper::flagged(SiteKey site, std::int64_t time_ms, Flags flags) {
  const auto found = sites_.find(site);
  if (found != sites_.end()) found->second.reflagged.emplace_back(time_ms, flags);
}

Result<void> DailyKeeper::gather(Store& store, SiteKey key, Site& site, std::int64_t from_ms,
                                 std::int64_t to_ms) {
  // Up to the latest reading stored before this batch the database has everything, this batch's
  // readings and flags included. After it, every reading is one of this batch's (site.added,
  // sorted), which only need the flags added since they were stored.
  const std::int64_t until =
      site.stored_until_ms.value_or(std::numeric_limits<std::int64_t>::max());
  if (from_ms <= until && site.tail_from_ms && from_ms >= *site.tail_from_ms) {
    // In time order: the stored part is in the tail (update_site() applied the batch's flags).
    const auto first =
        std::lower_bound(site.tail.begin(), site.tail.end(), DayReading{from_ms, {}, {}}, by_time);
    const auto last = std::upper_bound(first, site.tail.end(),
                                       DayReading{std::min(to_ms, until), {}, {}}, by_time);
    buffer_.assign(first, last);
  } else if (from_ms <= until) {
    auto read = store.readings().day_readings(key, from_ms, std::min(to_ms, until), buffer_);
    if (!read) return read;
  } else {
    buffer_.clear();
  }
  if (to_ms <= until) return {};
  const auto first = std::upper_bound(site.added.begin(), site.added.end(),
                                      DayReading{std::max(from_ms - 1, until), {}, {}}, by_time);
  for (auto it = first; it != site.added.end() && it->time_ms <= to_ms; ++it) {
    buffer_.push_back(*it);
  }
  return {};
}

Result<void> DailyKeeper::update_site(Store& store, WriteBatch& batch, SiteKey key, Site& site) {
  auto& added = site.added;
  if (!std::is_sorted(added.begin(), added.end(), by_time)) {  // usually in time order already
    std::stable_sort(added.begin(), added.end(), by_time);
  }
  // Flags added to this batch's own readings beyond stored_until_ms: the database has them, the
  // copies in `added` must get them too.
  const std::int64_t until =
      site.stored_until_ms.value_or(std::numeric_limits<std::int64_t>::max());
  for (const auto& [time_ms, flags] : site.reflagged) {
    auto& copies = time_ms <= until ? site.tail : added;  // the tail holds times up to `until`
    const auto it =
        std::lower_bound(copies.begin(), copies.end(), DayReading{time_ms, {}, {}}, by_time);
    if (it != copies.end() && it->time_ms == time_ms) it->flags |= flags;
  }
  // A late reading (at or before `until`) is in the database but not in the tail.
  if (!added.empty() && added.front().time_ms <= until) site.tail_from_ms.reset();

  std::vector<std::int64_t> times;
  times.reserve(added.size() + site.reflagged.size());
  for (const auto& reading : added) times.push_back(reading.time_ms);
  for (const auto& [time_ms, flags] : site.reflagged) times.push_back(time_ms);
  std::sort(times.begin() + static_cast<std::ptrdiff_t>(added.size()), times.end());
  std::inplace_merge(times.begin(), times.begin() + static_cast<std::ptrdiff_t>(added.size()),
                     times.end());
  const std::int64_t gap = site.rules.max_gap_ms;

  // The touched days, as runs of consecutive days. Times are sorted, so t - gap never falls before
  // the last run's first day: a time whose t + gap lies within the days already listed adds
  // nothing and costs no lookup (the common case: many readings of one day).
  std::vector<std::pair<Day, Day>> runs;
  std::int64_t listed_until_ms = 0;  // end of the last listed day
  for (const std::int64_t t : times) {
    if (!runs.empty() && t + gap < listed_until_ms) continue;
    const Day first = calendar_.day_of(t - gap);
    const Day last = calendar_.day_of(t + gap);
    if (!runs.empty() && first <= runs.back().second + 1) {
      runs.back().second = std::max(runs.back().second, last);
    } else {
      runs.emplace_back(first, last);
    }
    listed_until_ms = calendar_.start_ms(runs.back().second + 1);
  }

  auto table = store.daily();
  std::int64_t gathered_from_ms = 0;  // the range the last run gathered into buffer_
  std::int64_t gathered_to_ms = 0;
  for (const auto& [first, last] : runs) {
    // One gathering covers the run and the max_gap around it.
    gathered_from_ms = calendar_.start_ms(first) - gap;
    gathered_to_ms = calendar_.start_ms(last + 1) + gap;
    auto read = gather(store, key, site, gathered_from_ms, gathered_to_ms);
    if (!read) return read;
    for (Day day = first; day <= last; ++day) {
      const DayFigures figures = compute_day(buffer_, day, calendar_, site.rules);
      if (auto done = table.write_day(batch, key, figures); !done) return done;
    }
  }

  // What the next batch may take as stored before it.
  if (site.stored_until_ms) {
    if (!added.empty())
      site.stored_until_ms = std::max(*site.stored_until_ms, added.back().time_ms);
  } else {
    auto latest = latest_reading_ms(store, key);
    if (!latest) return std::unexpected(latest.error());
    site.stored_until_ms = *latest;
  }
  keep_tail(site, gathered_from_ms, gathered_to_ms, !runs.empty());
  added.clear();
  site.reflagged.clear();
  return {};
}

void DailyKeeper::keep_tail(Site& site, std::int64_t gathered_from_ms, std::int64_t gathered_to_ms,
                            bool gathered) {
  // The next batch's readings come after stored_until_ms. Its first touched day is then no
  // earlier than the day of stored_until_ms - max_gap, and it gathers from max_gap before that
  // day's start: the tail must reach back to there. The last run's buffer_ holds every reading of
  // the range it gathered, so it serves when that range covers the tail's.
  const std::int64_t until = *site.stored_until_ms;
  const std::int64_t gap = site.rules.max_gap_ms;
  const std::int64_t from = calendar_.start_ms(calendar_.day_of(until - gap)) - gap;
  if (!gathered || gathered_from_ms > from || gathered_to_ms < until) {
    site.tail.clear();
    site.tail_from_ms.reset();
    return;
  }
  const auto first =
      std::lower_bound(buffer_.begin(), buffer_.end(), DayReading{from, {}, {}}, by_time);
  const auto last = std::upper_bound(first, buffer_.end(), DayReading{until, {}, {}}, by_time);
  site.tail.assign(first, last);
  site.tail_from_ms = from;
}

Result<void> DailyKeeper::update(Store& store, WriteBatch& batch) {
  for (auto& [key, site] : sites_) {
    if (site.added.empty() && site.reflagged.empty()) continue;
    if (auto done = update_site(store, batch, key, site); !done) {
      forget();
      return done;
    }
  }
  return {};
}

void DailyKeeper::forget() {
  for (auto& [key, site] : sites_) {
    site.added.clear();
    site.reflagged.clear();
    site.stored_until_ms.reset();  // the batch may have moved it and then been rolled back
    site.tail.clear();
    site.tail_from_ms.reset();
  }
}

}  // namespace stagewell::daily
