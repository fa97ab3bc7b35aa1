// Alarms on a site: low and high discharge, a sensor gone quiet (stale), and a stage rising fast
// (README, "Alarms"; the keys are AlarmsSpec in config.hpp). Alarms are aids to operations staff,
// not a life-safety system.
//
// SiteAlarms is a pure evaluator: it reads no clock and touches no database. The ingest pipeline
// feeds it each stored reading in time order and the daemon calls tick() every few seconds; both
// return the alarms raised and cleared, which the caller stores (record_event) in the same
// transaction as the readings. After a restart the evaluator is seeded from the stored readings
// and told which alarms the store holds open, so an alarm open before the restart stays open and
// is not raised a second time.
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

#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/sqlite.hpp"
#include "stagewell/store.hpp"

namespace stagewell::alarms {

// The names are the `kind` column of the `alarms` view: never rename one.
enum class AlarmKind { low_flow, high_flow, stale, rising };
std::string_view name(AlarmKind kind);
std::optional<AlarmKind> parse_kind(std::string_view text);

// One stored reading, as the evaluator sees it.
struct AlarmReading {
  std::int64_t time_ms = 0;         // ms since the Unix epoch, UTC
  double stage = 0.0;               // the raw reading, site's stage units
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
};

// An alarm raised or cleared.
struct AlarmEvent {
  enum class Change { raised, cleared };
  AlarmKind kind = AlarmKind::low_flow;
  Change change = Change::raised;
  std::int64_t time_ms = 0;  // when: a reading's time, or the clock at a tick (stale)
  double value = 0.0;        // the value that raised (or cleared) it; unit: see the table above
  double threshold = 0.0;    // the configured level it was compared with (below/above/after/rate)
};

// An alarm as stored (the `alarms` view's row).
struct AlarmRecord {
  std::string site;
  AlarmKind kind = AlarmKind::low_flow;
  std::int64_t raised_ms = 0;
  std::optional<std::int64_t> cleared_ms;  // empty while open
  double value = 0.0;
  double threshold = 0.0;
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

// Writes an event in the open transaction of `connection`: a raise adds an open alarm, a clear
// closes the site's open alarm of that kind (nothing when none is open).
Result<void> record_event(sqlite::Connection& connection, SiteKey site, const AlarmEvent& event);

// The alarms open now (cleared IS NULL), of every site, ordered by site and raise time.
Result<std::vector<AlarmRecord>> open_alarms(Store& store);
// The kinds open for one site (to restore a SiteAlarms).
Result<std::vector<AlarmKind>> open_kinds(sqlite::Connection& connection, SiteKey site);

// Logs an event: warn when raised, info when cleared, with site, kind, value and threshold in
// their units (`units`: the configuration's system; `stage_units`: the site's).
void log_event(std::string_view site, const AlarmEvent& event, units::System units,
               units::Length stage_units);

}  // namespace stagewell::alarms
