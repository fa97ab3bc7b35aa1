// SiteChecker: the definitions are in checks.hpp; this file keeps them and says why where the
// code alone would not.
#include "stagewell/checks.hpp"

#include <algorithm>
#include <cmath>
#include <iterator>

namespace stagewell {
namespace {

constexpr double kMsPerHour = 3'600'000.0;

std::int64_t to_ms(double seconds) { return std::llround(seconds * 1000.0); }

}  // namespace

SiteChecker::SiteChecker(const ChecksSpec& spec, std::size_t window_readings)
    : spec_(spec),
      window_size_(std::max<std::size_t>(window_readings, 2)),
      max_gap_ms_(to_ms(spec.max_gap_s)),
      flatline_ms_(to_ms(spec.flatline_s)),
      max_clock_skew_ms_(to_ms(spec.max_clock_skew_s)) {}

std::optional<std::int64_t> SiteChecker::latest_time_ms() const {
  if (window_.empty()) return std::nullopt;
  return window_.back().time_ms;  // the window is in time order and always keeps its newest
}

bool SiteChecker::in_range(double stage) const {
  if (spec_.min_stage && stage < *spec_.min_stage) return false;
  if (spec_.max_stage && stage > *spec_.max_stage) return false;
  return true;
}

bool SiteChecker::too_fast(const Entry& other, std::int64_t time_ms, double stage) const {
  if (!spec_.max_rate || other.time_ms == time_ms) return false;
  const double hours = static_cast<double>(std::llabs(time_ms - other.time_ms)) / kMsPerHour;
  return std::fabs(stage - other.stage) / hours > *spec_.max_rate;
}

std::optional<PastReading> SiteChecker::neighbour(const Entry& before, std::int64_t time_ms) const {
  if (before.time_ms >= time_ms) return std::nullopt;
  if (max_gap_ms_ > 0 && time_ms - before.time_ms > max_gap_ms_) return std::nullopt;
  return PastReading{before.time_ms, before.stage};
}

CheckResult SiteChecker::check(std::int64_t time_ms, double stage, std::int64_t now_ms) {
  CheckResult result;
  const bool plausible = in_range(stage);
  if (!plausible) result.flags.set(Flag::out_of_range);
  const auto latest = latest_time_ms();
  const bool late = latest && time_ms < *latest;
  if (late) result.flags.set(Flag::late);
  if (time_ms > now_ms + max_clock_skew_ms_) {
    result.flags.set(Flag::future);
    return result;
  }
  if (late) {
    check_late(time_ms, stage, plausible, result);
  } else {
    check_in_order(time_ms, stage, plausible, result);
  }
  return result;
}

void SiteChecker::check_in_order(std::int64_t time_ms, double stage, bool plausible,
                                 CheckResult& result) {
  if (!window_.empty() && max_gap_ms_ > 0 && time_ms - window_.back().time_ms > max_gap_ms_) {
    result.flags.set(Flag::gap);
  }
  if (plausible) {
    const auto previous = std::find_if(window_.rbegin(), window_.rend(),
                                       [](const Entry& entry) { return entry.in_range; });
    if (previous != window_.rend() && too_fast(*previous, time_ms, stage)) {
      result.flags.set(Flag::unsteady);
    }
    if (previous != window_.rend()) result.previous = neighbour(*previous, time_ms);
    track_spike(time_ms, stage, result);
    track_flatline(time_ms, stage, result);
  }
  window_.push_back(Entry{time_ms, stage, plausible});
  trim_window();
}

void SiteChecker::check_late(std::int64_t time_ms, double stage, bool plausible,
                             CheckResult& result) {
  // Older than everything kept: its neighbours are unknown, so only the range check applies.
  if (window_.empty() || time_ms < window_.front().time_ms) return;
  const auto position =
      std::upper_bound(window_.begin(), window_.end(), time_ms,
                       [](std::int64_t time, const Entry& entry) { return time < entry.time_ms; });
  const Entry& before = *std::prev(position);
  if (max_gap_ms_ > 0 && time_ms - before.time_ms > max_gap_ms_) result.flags.set(Flag::gap);
  if (plausible) {
    const auto in_range_entry = [](const Entry& entry) { return entry.in_range; };
    const auto earlier =
        std::find_if(std::make_reverse_iterator(position), window_.rend(), in_range_entry);
    const auto later = std::find_if(position, window_.end(), in_range_entry);
    const bool fast_before = earlier != window_.rend() && too_fast(*earlier, time_ms, stage);
    const bool fast_after = later != window_.end() && too_fast(*later, time_ms, stage);
    if (fast_before || fast_after) result.flags.set(Flag::unsteady);
    if (earlier != window_.rend()) result.previous = neighbour(*earlier, time_ms);
  }
  window_.insert(position, Entry{time_ms, stage, plausible});
  trim_window();
}

void SiteChecker::track_spike(std::int64_t time_ms, double stage, CheckResult& result) {
  if (!spec_.spike || *spec_.spike <= 0.0) {
    spike_level_ = stage;
    return;
  }
  const double jump = *spec_.spike;
  const std::size_t longest = static_cast<std::size_t>(std::max(spec_.spike_window, 1));
  if (excursion_) {
    if (std::fabs(stage - excursion_->level_before) <= jump / 2.0) {
      for (const std::int64_t excursion_time : excursion_->times_ms) {
        result.earlier.push_back(EarlierFlag{excursion_time, Flag::spike});
      }
      excursion_.reset();
      spike_level_ = stage;
      return;
    }
    if (excursion_->times_ms.size() < longest) {
      excursion_->times_ms.push_back(time_ms);
      spike_level_ = stage;
      return;
    }
    // Away for longer than a spike lasts: the level changed. This reading may still start a new
    // excursion from the changed level.
    excursion_.reset();
  }
  if (spike_level_ && std::fabs(stage - *spike_level_) >= jump) {
    excursion_ = Excursion{*spike_level_, {time_ms}};
  }
  spike_level_ = stage;
}

void SiteChecker::track_flatline(std::int64_t time_ms, double stage, CheckResult& result) {
  // Exact equality on purpose: a live sensor's last digit wanders; a stuck one repeats itself.
  // A gap ends the run: the same value read again after months offline says nothing about the
  // sensor being stuck in between, since nothing was read in between.
  const bool after_gap = max_gap_ms_ > 0 && time_ms - run_last_ms_ > max_gap_ms_;
  run_last_ms_ = time_ms;
  if (run_start_ms_ && stage == run_stage_ && !after_gap) {
    if (flatline_ms_ > 0 && time_ms - *run_start_ms_ > flatline_ms_) {
      result.flags.set(Flag::flatline);
    }
    return;
  }
  run_start_ms_ = time_ms;
  run_stage_ = stage;
}

void SiteChecker::trim_window() {
  while (window_.size() > window_size_) window_.pop_front();
}

void SiteChecker::seed(std::span<const PastReading> readings) {
  window_.clear();
  spike_level_.reset();
  excursion_.reset();
  run_start_ms_.reset();

  std::vector<PastReading> sorted(readings.begin(), readings.end());
  std::stable_sort(sorted.begin(), sorted.end(), [](const PastReading& a, const PastReading& b) {
    return a.time_ms < b.time_ms;
  });
  CheckResult ignored;
  for (const PastReading& reading : sorted) {
    const bool plausible = in_range(reading.stage);
    if (plausible) {
      spike_level_ = reading.stage;
      track_flatline(reading.time_ms, reading.stage, ignored);
    }
    window_.push_back(Entry{reading.time_ms, reading.stage, plausible});
    trim_window();
  }
}

}  // namespace stagewell
