// DaySweep: consecutive days computed in one pass over readings that arrive a stretch at a time.
#include <algorithm>

#include "stagewell/daily.hpp"

namespace stagewell::daily {

DaySweep::DaySweep(DayCalendar calendar, const DayRules& rules, Day first, Day last)
    : calendar_(std::move(calendar)), rules_(rules), next_(first), last_(last) {
  next_end_ms_ = calendar_.start_ms(next_ + 1);
}

void DaySweep::add(std::span<const DayReading> readings) {
  if (readings.empty()) return;
  readings_.insert(readings_.end(), readings.begin(), readings.end());
  // compute_day() reads up to max_gap past the day's end: once a reading beyond that has arrived
  // (times increase), the day has every reading it will ever get.
  const std::int64_t latest_ms = readings_.back().time_ms;
  while (next_ <= last_ && latest_ms > next_end_ms_ + rules_.max_gap_ms) compute_next_day();
}

std::vector<DayFigures> DaySweep::finish() {
  while (next_ <= last_) compute_next_day();
  readings_ = {};
  return std::move(days_);
}

void DaySweep::compute_next_day() {
  const std::span<const DayReading> kept(
      readings_.begin() + static_cast<std::ptrdiff_t>(first_kept_), readings_.end());
  DayFigures figures = compute_day(kept, next_, calendar_, rules_);
  if (!figures.empty()) days_.push_back(std::move(figures));
  const std::int64_t next_start_ms = next_end_ms_;
  ++next_;
  next_end_ms_ = calendar_.start_ms(next_ + 1);

  // The days still to come reach back max_gap before the next one's start at most.
  const auto first_needed =
      std::lower_bound(kept.begin(), kept.end(), next_start_ms - rules_.max_gap_ms,
                       [](const DayReading& r, std::int64_t t) { return r.time_ms < t; });
  first_kept_ += static_cast<std::size_t>(first_needed - kept.begin());
  // Dropped from the front once they are the larger part: each reading is moved about once.
  if (first_kept_ > readings_.size() / 2) {
    readings_.erase(readings_.begin(),
                    readings_.begin() + static_cast<std::ptrdiff_t>(first_kept_));
    first_kept_ = 0;
  }
}

}  // namespace stagewell::daily
