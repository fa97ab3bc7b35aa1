// The Recomputation (recomputation.hpp): finds the readings to redo, walks them in steps of one
// transaction, and keeps the record of the recomputation (recompute_record.cpp) current.
#include "stagewell/recomputation.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <deque>
#include <map>

#include "recompute_record.hpp"
#include "stagewell/checks.hpp"
#include "stagewell/daily.hpp"
#include "stagewell/site_history.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

// Readings given to the checks as context before the period: their window and, for flatline,
// as far back as a 1-minute logger's default flatline (the same bound as the ingest path's).
constexpr std::size_t kContextReadings = 4096;

// Flags that depend on when a reading arrived, not on its neighbours in time: kept as stored.
constexpr Flags kArrivalFlags =
    Flags(static_cast<std::uint32_t>(Flag::late) | static_cast<std::uint32_t>(Flag::future));

// |a - b| for discharges or volumes that may be missing: a value gained or lost counts whole.
double difference(std::optional<double> a, std::optional<double> b) {
  if (a && b) return std::fabs(*a - *b);
  if (a) return std::fabs(*a);
  if (b) return std::fabs(*b);
  return 0.0;
}

}  // namespace

struct Recomputation::State {
  const Config* config = nullptr;
  const SiteConfig* site = nullptr;
  SiteKey key;
  SiteHistory history;
  daily::DayCalendar calendar;
  daily::DayRules rules;
  RecomputationTotals totals;
  std::int64_t started_ms = 0;
  std::int64_t cursor_ms = 0;  // the next reading to walk is at or after this
  bool finished = false;
  bool broken = false;  // a step failed: the in-memory state is ahead of the database

  // The checks, fed in time order; `recent` re-seeds them where a change brings other checks.
  ChecksSpec checks;
  SiteChecker checker;
  std::deque<PastReading> recent;

  std::map<daily::Day, std::optional<double>> original_volume;  // m^3 or ft^3, before any step
  std::map<daily::Day, std::optional<double>> new_volume;
  RecomputeRecord record;

  State(SiteHistory h, daily::DayCalendar c, const SiteConfig& s)
      : history(std::move(h)), calendar(std::move(c)), checks(s.checks), checker(s.checks) {}

  void remember(std::int64_t time_ms, double stage) {
    recent.push_back({time_ms, stage});
    if (recent.size() > kContextReadings) recent.pop_front();
  }
};

Recomputation::Recomputation(std::unique_ptr<State> state) : state_(std::move(state)) {}
Recomputation::~Recomputation() = default;

bool Recomputation::done() const { return state_->finished; }
const RecomputationTotals& Recomputation::totals() const { return state_->totals; }
const std::string& Recomputation::site_id() const { return state_->site->id; }

Result<std::unique_ptr<Recomputation>> Recomputation::plan(Store& store, const Config& config,
                                                           std::string_view site_id,
                                                           std::int64_t now_ms,
                                                           std::int64_t from_ms,
                                                           std::int64_t to_ms) {
  const SiteConfig* site = config.find_site(site_id);
  if (site == nullptr) {
    return fail(ErrorKind::not_found,
                fmt::format("no site '{}' in {}", site_id, config.file.string()));
  }
  auto key = store.sites().ensure(site->id);
  if (!key) return std::unexpected(key.error());
  auto history = SiteHistory::open(store, *key, *site, config.units, now_ms);
  if (!history) return std::unexpected(history.error());
  auto zone = TimeZone::parse(config.timezone);
  if (!zone) return std::unexpected(zone.error());
  auto state =
      std::make_unique<State>(std::move(*history), daily::DayCalendar(std::move(*zone)), *site);
  state->config = &config;
  state->site = site;
  state->key = *key;
  state->rules = daily::rules_for(*site, config.daily);
  state->started_ms = now_ms;

  // The period: from the first to the last reading whose version is not its segment's.
  auto readings = store.readings();
  auto& totals = state->totals;
  for (const HistorySegment& segment : state->history.segments()) {
    const std::int64_t from = std::max(segment.from_ms, from_ms);
    const std::int64_t to = std::min(segment.to_ms, to_ms);
    if (from >= to) continue;
    auto found = readings.mismatched(*key, from, to, segment.version);
    if (!found) return std::unexpected(found.error());
    if (!*found) continue;
    totals.period_from_ms =
        std::min(totals.period_from_ms.value_or((*found)->first), (*found)->first);
    totals.period_to_ms =
        std::max(totals.period_to_ms.value_or((*found)->second), (*found)->second);
  }
  // A recomputation of this site stopped part-way: this run goes on with its row.
  auto earlier = store.recomputation_runs().unfinished(*key);
  if (!earlier) return std::unexpected(earlier.error());
  if (*earlier) state->record.resume((*earlier)->first, (*earlier)->second);
  if (!totals.period_from_ms) {
    state->finished = true;
    if (*earlier) {  // its rest was done by another run, or undone by a later configuration
      auto batch = store.begin();
      if (!batch) return std::unexpected(batch.error());
      auto marked = state->record.write(store, *batch, *key, now_ms, totals, now_ms);
      if (!marked) return std::unexpected(marked.error());
      if (auto committed = batch->commit(); !committed) return std::unexpected(committed.error());
    }
    return std::unique_ptr<Recomputation>(new Recomputation(std::move(state)));
  }
  auto count = readings.count(*key, *totals.period_from_ms, *totals.period_to_ms);
  if (!count) return std::unexpected(count.error());
  totals.readings_in_period = *count;
  state->cursor_ms = *totals.period_from_ms;

  // The checks' context: the readings before the period, with the checks in force at its start.
  state->checks = state->history.segment_at(*totals.period_from_ms).keys->checks;
  state->checker = SiteChecker(state->checks);
  auto before = readings.recent(*key, *totals.period_from_ms - 1, kContextReadings);
  if (!before) return std::unexpected(before.error());
  for (const auto& reading : *before) {
    if (!reading.flags.has(Flag::future)) state->remember(reading.time_ms, reading.stage);
  }
  const std::vector<PastReading> seed(state->recent.begin(), state->recent.end());
  state->checker.seed(seed);
  return std::unique_ptr<Recomputation>(new Recomputation(std::move(state)));
}

Result<void> Recomputation::step(Store& store, std::int64_t max_readings) {
  State& s = *state_;
  if (s.broken) return fail(ErrorKind::invalid_argument, "a failed recomputation cannot go on");
  if (s.finished) return {};
  s.broken = true;  // until this step is committed
  auto batch = store.begin();
  if (!batch) return std::unexpected(batch.error());
  auto readings = store.readings();

  std::vector<StoredReading> stored;
  if (auto read =
          readings.range(s.key, s.cursor_ms, *s.totals.period_to_ms,
                         static_cast<std::size_t>(std::max<std::int64_t>(max_readings, 1)), stored);
      !read) {
    return read;
  }
  // New values in memory first: a spike is recognised a few readings later and flags readings
  // before it, which may be in this step (or, at its start, in the step before).
  std::vector<ComputedReading> computed;
  computed.reserve(stored.size());
  for (const StoredReading& reading : stored) {
    const ChecksSpec& in_force = s.history.segment_at(reading.time_ms).keys->checks;
    if (!(in_force == s.checks)) {  // a change brings other checks: same context, new rules
      s.checks = in_force;
      s.checker = SiteChecker(s.checks);
      const std::vector<PastReading> seed(s.recent.begin(), s.recent.end());
      s.checker.seed(seed);
    }
    Flags checked;
    std::optional<PastReading> previous;
    if (reading.flags.has(Flag::future)) {
      // Changes no check state, as at ingest; only the range check is its own.
      SiteChecker alone(s.checks);
      checked = alone.check(reading.time_ms, reading.stage, reading.time_ms).flags;
    } else {
      // In time order and "now" at the reading: neither late nor future can arise here.
      const CheckResult result = s.checker.check(reading.time_ms, reading.stage, reading.time_ms);
      checked = result.flags;
      previous = result.previous;
      for (const EarlierFlag& earlier : result.earlier) {
        const auto it = std::lower_bound(
            stored.begin(), stored.end(), earlier.time_ms,
            [](const StoredReading& r, std::int64_t time) { return r.time_ms < time; });
        const auto index = static_cast<std::size_t>(it - stored.begin());
        if (it != stored.end() && it->time_ms == earlier.time_ms && index < computed.size()) {
          computed[index].flags |= earlier.flags;
        } else if (earlier.time_ms >= *s.totals.period_from_ms) {
          auto done = readings.rewrite_flags(*batch, s.key, earlier.time_ms, earlier.flags);
          if (!done) return done;
        }
      }
      s.remember(reading.time_ms, reading.stage);
    }
    Flags kept = reading.flags;
    kept = Flags(kept.bits() & kArrivalFlags.bits());
    checked |= kept;
    computed.push_back(s.history.compute(reading.time_ms, reading.stage, checked, previous));
  }

  std::optional<std::int64_t> first_changed;
  std::optional<std::int64_t> last_changed;
  for (std::size_t i = 0; i < stored.size(); ++i) {
    const StoredReading& old = stored[i];
    const ComputedReading& now = computed[i];
    // readings_changed counts what the recomputations view says: depth, discharge or flags. A
    // band or Jones estimate that changes alone is written too, and its days refreshed (their band
    // volumes), without counting.
    const bool values_changed =
        old.depth != now.depth || old.discharge != now.discharge || !(old.flags == now.flags);
    const bool estimates_changed =
        old.band != now.band || old.discharge_jones != now.discharge_jones;
    const bool version_changed = old.config != now.config;
    if (!values_changed && !estimates_changed && !version_changed) continue;
    if (auto done = readings.rewrite(*batch, s.key, old.time_ms, now); !done) return done;
    if (version_changed) {
      ++s.totals.readings_recomputed;
      s.record.saw(old.config, now.config, old.time_ms);
    }
    if (values_changed) {
      ++s.totals.readings_changed;
      s.totals.max_discharge_change =
          std::max(s.totals.max_discharge_change, difference(old.discharge, now.discharge));
    }
    if (values_changed || estimates_changed) {
      if (!first_changed) first_changed = old.time_ms;
      last_changed = old.time_ms;
    }
  }

  // The local days the changed readings can reach (daily_keeper.hpp: t +- max_gap).
  if (first_changed) {
    const daily::Day first = s.calendar.day_of(*first_changed - s.rules.max_gap_ms);
    const daily::Day last = s.calendar.day_of(*last_changed + s.rules.max_gap_ms);
    auto figures_table = store.daily();
    auto old_days = figures_table.days(s.key, first, last);
    if (!old_days) return std::unexpected(old_days.error());
    for (daily::Day day = first; day <= last; ++day) s.original_volume.try_emplace(day);
    for (const auto& figures : *old_days) {
      auto& original = s.original_volume[figures.day];
      if (!s.new_volume.contains(figures.day)) original = figures.volume;
    }
    auto day_readings =
        readings.day_readings(s.key, s.calendar.start_ms(first) - s.rules.max_gap_ms,
                              s.calendar.start_ms(last + 1) + s.rules.max_gap_ms);
    if (!day_readings) return std::unexpected(day_readings.error());
    for (daily::Day day = first; day <= last; ++day) {
      const daily::DayFigures figures = daily::compute_day(*day_readings, day, s.calendar, s.rules);
      if (auto done = figures_table.write_day(*batch, s.key, figures); !done) return done;
      s.new_volume[day] = figures.volume;
    }
    double largest = 0.0;
    for (const auto& [day, volume] : s.new_volume) {
      largest = std::max(largest, difference(volume, s.original_volume[day]));
    }
    s.totals.max_daily_volume_change = largest;
    s.totals.days_refreshed = static_cast<std::int64_t>(s.new_volume.size());
  }

  s.totals.readings_walked += static_cast<std::int64_t>(stored.size());
  const bool last_step = static_cast<std::int64_t>(stored.size()) < max_readings ||
                         stored.empty() || stored.back().time_ms >= *s.totals.period_to_ms;
  if (s.record.any()) {
    // Finished: the wall clock, never before the start (which a test's clock may set ahead).
    const auto finished =
        last_step ? std::optional(std::max(system_now_ms(), s.started_ms)) : std::nullopt;
    if (auto done = s.record.write(store, *batch, s.key, s.started_ms, s.totals, finished); !done) {
      return done;
    }
  }
  if (auto committed = batch->commit(); !committed) return committed;
  s.broken = false;
  if (last_step) {
    s.finished = true;
  } else {
    s.cursor_ms = stored.back().time_ms + 1;
  }
  return {};
}

}  // namespace stagewell
