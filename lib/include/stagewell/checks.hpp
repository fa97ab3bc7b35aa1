// Checks on every reading of one site: a state machine fed readings in arrival order.
//
// Stage is the reading as it arrived (stage units, before the site's offset); times are
// milliseconds since the epoch. Thresholds come from ChecksSpec; an unset one turns its check off.
// Comparisons are strict where the definition says "more than" and inclusive where it says
// "at least" or "within", so a value exactly at a threshold behaves as written below.
//
// Definitions (docs/checks-and-alarms.md copies these; they are this program's definitions, not a
// standard):
//
//   out_of_range  stage < min_stage or stage > max_stage.
//   future        time > now + max_clock_skew.
//   late          time < the latest time already accepted for the site.
//   gap           time - (time of the previous reading in time order) > max_gap.
//                 Off when max_gap <= 0. The first reading ever (no history) has no gap.
//   unsteady      |stage - previous stage| / (hours between them) > max_rate, against the previous
//                 in-range reading in time order. Two readings at the same time are not compared.
//   spike         a reading at least `spike` away from the previous in-range reading starts an
//                 excursion; if within `spike_window` readings a reading comes back to within
//                 spike/2 of the level before the jump, every reading of the excursion (not the
//                 one that came back) is flagged spike. They have already been reported, so the
//                 flag comes back in CheckResult::earlier, by time. An excursion that lasts longer
//                 than spike_window readings is a change of level and flags nothing.
//   flatline      the stage is exactly equal to that of every reading since a reading more than
//                 `flatline` earlier: readings after the first `flatline` of a run of identical
//                 values are flagged (the run's first readings are not). Off when flatline <= 0.
//                 A run holds only readings at most max_gap apart (when max_gap > 0): a reading
//                 more than max_gap after the run's latest reading starts a new run, even with
//                 the same stage.
//
// Which readings are neighbours:
//   - Out-of-range readings get only out_of_range, gap, late and future. They are kept for gap
//     (the sensor was talking) but are never the neighbour for unsteady or spike, do not count
//     toward spike_window, and neither join nor break a flatline run: an implausible value says
//     nothing about how the water moved.
//   - Future readings get only future, out_of_range and late, and change no state: one reading
//     with a wrong year must not make every later reading late.
//   - A late reading is placed among its true neighbours in a window of the most recent readings
//     in time order (window_readings, default 64): gap against the reading before it; unsteady if
//     the rate to the in-range reading before OR after it is too high, flagged on the late reading
//     itself. Flags already given to other readings are not withdrawn or added. A late reading
//     earlier than every reading in the window gets only late and out_of_range (and future).
//   - Spike and flatline follow readings in arrival order and ignore late readings.
//
// Restart: seed() with stored readings restores the window, the latest time, the level before
// the next reading (for spike) and the current run of identical values (for flatline). An
// excursion in progress at shutdown is not restored, so that spike is missed.
//
// Not thread-safe: one SiteChecker per site, fed from one place.
#pragma once

#include <cstddef>
#include <cstdint>
#include <deque>
#include <optional>
#include <span>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"

namespace stagewell {

inline constexpr std::size_t kDefaultCheckWindow = 64;  // readings

// A flag for a reading already reported, identified by its time.
struct EarlierFlag {
  std::int64_t time_ms = 0;
  Flags flags;
};

struct PastReading {
  std::int64_t time_ms = 0;
  double stage = 0.0;  // stage units, as read
};

struct CheckResult {
  Flags flags;                       // for the reading just checked
  std::vector<EarlierFlag> earlier;  // to add to earlier readings, oldest first; usually empty
  // The in-range reading before this one in time order, when this one is in range, not future,
  // at a later time and at most max_gap after it (any time apart when max_gap is off): the
  // neighbour the rate of change of stage is taken from (the Jones estimate, uncertainty.hpp).
  std::optional<PastReading> previous;
};

class SiteChecker {
 public:
  // REQUIRES: window_readings >= 2.
  explicit SiteChecker(const ChecksSpec& spec, std::size_t window_readings = kDefaultCheckWindow);

  // Replaces all state with what `readings` imply, as if they had been checked in time order.
  // Any order; leave out readings that were flagged future. Pass at least the last window_readings
  // readings and, for flatline, every reading back to `flatline` before the newest (a run that
  // started earlier is taken to start at the oldest reading given).
  void seed(std::span<const PastReading> readings);

  // Checks one reading. `now_ms` is the current time (injected so tests control it).
  CheckResult check(std::int64_t time_ms, double stage, std::int64_t now_ms);

  std::optional<std::int64_t> latest_time_ms() const;

 private:
  struct Entry {
    std::int64_t time_ms;
    double stage;
    bool in_range;
  };
  struct Excursion {
    double level_before;                 // stage units
    std::vector<std::int64_t> times_ms;  // readings away from level_before, in arrival order
  };

  bool in_range(double stage) const;
  bool too_fast(const Entry& a, std::int64_t time_ms, double stage) const;
  std::optional<PastReading> neighbour(const Entry& before, std::int64_t time_ms) const;
  void check_in_order(std::int64_t time_ms, double stage, bool in_range, CheckResult& result);
  void check_late(std::int64_t time_ms, double stage, bool in_range, CheckResult& result);
  void track_spike(std::int64_t time_ms, double stage, CheckResult& result);
  void track_flatline(std::int64_t time_ms, double stage, CheckResult& result);
  void trim_window();

  ChecksSpec spec_;
  std::size_t window_size_;
  std::int64_t max_gap_ms_;
  std::int64_t flatline_ms_;
  std::int64_t max_clock_skew_ms_;

  std::deque<Entry> window_;           // time order, at most window_size_
  std::optional<double> spike_level_;  // last in-range stage in arrival order
  std::optional<Excursion> excursion_;
  std::optional<std::int64_t> run_start_ms_;  // first reading of the current identical run
  std::int64_t run_last_ms_ = 0;              // its latest reading (valid with run_start_ms_)
  double run_stage_ = 0.0;
};

}  // namespace stagewell
