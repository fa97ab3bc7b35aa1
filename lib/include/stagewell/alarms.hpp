// Alarms on a site: low and high discharge, a sensor gone quiet (stale), and a stage rising fast
// (docs/checks-and-alarms.md, "Alarms"; the keys are AlarmsSpec in config.hpp). Alarms are aids to
// operations staff, not a life-safety system.
//
// SiteAlarms is a pure evaluator: it reads no clock and touches no database. The ingest pipeline
// feeds it each stored reading in time order and the daemon calls tick() every few seconds; both
// return the alarms raised and cleared, which the caller stores in the same transaction as the
// readings (AlarmTable, alarm_table.hpp). After a restart the evaluator is seeded from the stored
// readings and told which alarms the store holds open, so an alarm open before the restart stays
// open and is not raised a second time.
//
// What each kind compares (units of value and threshold, as in the `alarms` view):
//   low_flow   discharge below `below`, m^3/s or ft^3/s; clears above below + hysteresis
//   high_flow  discharge above `above`, m^3/s or ft^3/s; clears below above - hysteresis
//   stale      seconds since the newest reading, by the clock, reaching `after`; clears when a
//              reading arrives that is newer than `after` ago
//   rising     rate of rise of stage across `window`, site stage units per hour, above `rate`;
//              clears below rate - hysteresis
// A threshold alarm raises only once its condition has held, reading after reading, for `hold`
// (by the readings' times); the raise is at the reading that completes the hold.
//
// Readings that do not move the alarms:
//   - no discharge (out_of_range): neither raise nor clear the discharge alarms, and are left out
//     of the rate of rise (their stage is implausible); they do count as the sensor speaking;
//   - flagged `future`: their time cannot be trusted; ignored by every alarm;
//   - late (not newer than the newest reading already fed): ignored by every alarm. The
//     evaluator's state already reflects the later readings, and replaying an older value into
//     it would raise or clear on data that is no longer current.
//
// Not thread-safe: each SiteAlarms belongs to the Ingestor that owns the store.
#pragma once

#include <cstdint>
#include <deque>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/alarm_rows.hpp"
#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"

namespace stagewell::alarms {

// One stored reading, as the evaluator sees it.
struct AlarmReading {
  std::int64_t time_ms = 0;         // ms since the Unix epoch, UTC
  double stage = 0.0;               // the raw reading, site's stage units
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
};

class SiteAlarms {
 public:
  // `started_ms`: when watching began. A site that has never sent a reading counts as silent
  // from then on (stale).
  SiteAlarms(const AlarmsSpec& spec, std::int64_t started_ms);

  // A stored reading. REQUIRES: fed in the order stored; now_ms is the clock (for stale).
  void reading(const AlarmReading& reading, std::int64_t now_ms, std::vector<AlarmEvent>& events);
  // The clock moved on: raises stale when no reading has come for `after`.
  void tick(std::int64_t now_ms, std::vector<AlarmEvent>& events);

  // Restores the state after a restart: replays `past` (oldest first) without raising anything,
  // then takes which kinds are open from the store (`open`), whatever the replay concluded.
  void restore(std::span<const AlarmReading> past, std::span<const AlarmKind> open);

  bool is_open(AlarmKind kind) const;

 private:
  // One threshold alarm: raises when the value is past the threshold for `hold`.
  struct Threshold {
    ThresholdAlarmSpec spec;
    bool above = false;  // raises above the threshold (else below)
    bool open = false;
    std::optional<std::int64_t> held_since_ms;  // first reading of the current run past it

    void step(AlarmKind kind, std::int64_t time_ms, double value, std::vector<AlarmEvent>& events);
    void set_open(bool now_open);
  };
  struct StagePoint {
    std::int64_t time_ms;
    double stage;
  };
  std::optional<double> rate_of_rise(std::int64_t time_ms, double stage);

  Threshold low_;
  Threshold high_;
  Threshold rising_;
  std::optional<std::int64_t> stale_after_ms_;
  std::int64_t rising_window_ms_;
  std::int64_t started_ms_;
  std::optional<std::int64_t> newest_ms_;  // newest reading fed (not future)
  bool stale_open_ = false;
  std::deque<StagePoint> window_;  // readings within the rising window, oldest first
};

// Logs an event: warn when raised, info when cleared, with site, kind, value and threshold in
// their units (`units`: the configuration's system; `stage_units`: the site's).
void log_event(std::string_view site, const AlarmEvent& event, units::System units,
               units::Length stage_units);

}  // namespace stagewell::alarms
