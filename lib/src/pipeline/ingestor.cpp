#include "stagewell/ingestor.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <unordered_map>
#include <vector>

#include "stagewell/alarms.hpp"
#include "stagewell/checks.hpp"
#include "stagewell/daily_keeper.hpp"
#include "stagewell/site_history.hpp"

namespace stagewell {
namespace {

// Readings restored into each site's checks at start-up: the check window, and for flatline every
// reading back to the flatline duration (bounded so a 1-second logger cannot make start-up slow).
constexpr std::size_t kSeedReadings = 4096;

// Sites are looked up twice per reading by a string_view into the line: a transparent hash finds
// them without building a std::string (which allocates for an id longer than 15 characters).
struct SiteIdHash {
  using is_transparent = void;
  std::size_t operator()(std::string_view id) const { return std::hash<std::string_view>{}(id); }
};

}  // namespace

void IngestCounts::add(const IngestCounts& other) {
  stored += other.stored;
  duplicates += other.duplicates;
  rejected += other.rejected;
  commits += other.commits;
  for (const auto& [reason, count] : other.rejected_by_reason) rejected_by_reason[reason] += count;
  for (const auto& [flag, count] : other.flagged_by_flag) flagged_by_flag[flag] += count;
}

struct Ingestor::Site {
  const SiteConfig* config = nullptr;
  // Segments of the site's history, their versions, channels and ratings (site_history.hpp).
  std::optional<SiteHistory> history;
  SiteChecker checker;
  // The checks `checker` applies: those in force at the time of the reading being checked. A
  // reading in a period with other checks (a change) rebuilds the checker from the store.
  ChecksSpec checks;
  SiteKey key;
  // Time of the newest stored reading not flagged future, ms. A later reading cannot repeat a
  // stored one, so only readings at or before it need the store's look-up. (Future readings are
  // left out so that one wrong year does not put every later reading through the look-up; their
  // repeats are still caught by the insert, and future readings change no check state.)
  std::optional<std::int64_t> newest_ms;
  std::optional<alarms::SiteAlarms> alarms;  // empty when the site has no alarms configured

  explicit Site(const SiteConfig& site)
      : config(&site), checker(site.checks), checks(site.checks) {}
};

struct Ingestor::State {
  Config config;
  IngestorOptions options;
  Clock clock;
  Store store;
  std::unordered_map<std::string, std::unique_ptr<Site>, SiteIdHash, std::equal_to<>> sites;
  std::optional<WriteBatch> batch;
  std::int64_t batch_started_ms = 0;
  std::int64_t batch_readings = 0;
  IngestCounts pending;  // counts of the open batch, added to the totals on commit
  // Readings of the open batch with each flag, by bit position: counted without building a name
  // per flagged reading, and named once, at commit (into pending.flagged_by_flag).
  std::array<std::int64_t, 32> pending_flags{};

  void count_flags(Flags flags) {
    for (std::uint32_t bits = flags.bits(); bits != 0; bits &= bits - 1) {
      ++pending_flags[static_cast<std::size_t>(std::countr_zero(bits))];
    }
  }
  void name_flag_counts() {
    for (std::size_t bit = 0; bit < pending_flags.size(); ++bit) {
      if (pending_flags[bit] == 0) continue;
      pending.flagged_by_flag[std::string(name(static_cast<Flag>(1u << bit)))] +=
          pending_flags[bit];
    }
    pending_flags.fill(0);
  }
  void clear_pending() {
    pending = IngestCounts{};
    pending_flags.fill(0);
  }
  std::vector<CommitObserver> observers;
  std::optional<daily::DailyKeeper> daily;  // empty when options.keep_daily is off
  std::int64_t opened_ms = 0;               // when the Ingestor was opened (alarms: stale)
  // What the copies of stored readings (checks, alarms, daily keeper) were last taken from: the
  // store says when the stored readings changed since (refresh_copies()).
  ReadingsMark readings_seen;
  // Counts refreshes of the copies, so that work done on them before a batch was opened can be
  // done again when opening it refreshed them.
  std::int64_t refreshes = 0;
  // Alarm events written in the open batch, logged once it commits (never when it rolls back).
  std::vector<std::pair<const Site*, alarms::AlarmEvent>> alarm_log;
  std::vector<alarms::AlarmEvent> alarm_scratch;  // reused for every reading

  void log_alarms() {
    for (const auto& [site, event] : alarm_log) {
      alarms::log_event(site->config->id, event, config.units, site->config->stage.units);
    }
    alarm_log.clear();
  }

  void notify(bool committed) {
    for (const auto& observer : observers) observer(committed);
  }

  State(Config c, IngestorOptions o, Clock k, Store s)
      : config(std::move(c)), options(o), clock(std::move(k)), store(std::move(s)) {}
};

namespace {

Result<void> seed_checker(Store& store, SiteKey key, SiteChecker& checker,
                          std::optional<std::int64_t>& newest_ms) {
  auto stored =
      store.readings().recent(key, std::numeric_limits<std::int64_t>::max(), kSeedReadings);
  if (!stored) return std::unexpected(stored.error());
  std::vector<PastReading> past;
  past.reserve(stored->size());
  for (const auto& reading : *stored) {
    if (reading.flags.has(Flag::future)) continue;
    past.push_back({reading.time_ms, reading.stage});
  }
  newest_ms.reset();
  if (!past.empty()) newest_ms = past.back().time_ms;  // oldest first
  checker.seed(past);
  return {};
}

// A fresh evaluator for the site's alarms, replaying its recent readings and taking which alarms
// are open from the store: an alarm open before a restart stays open and is not raised again.
Result<void> restore_alarms(Store& store, SiteKey key, const SiteConfig& config,
                            std::int64_t started_ms, std::optional<alarms::SiteAlarms>& out) {
  out.reset();
  if (!config.alarms.any()) return {};
  auto stored =
      store.readings().recent(key, std::numeric_limits<std::int64_t>::max(), kSeedReadings);
  if (!stored) return std::unexpected(stored.error());
  std::vector<alarms::AlarmReading> past;
  past.reserve(stored->size());
  for (const auto& reading : *stored) {
    past.push_back({reading.time_ms, reading.stage, reading.discharge, reading.flags});
  }
  auto open = store.alarms().open_kinds(key);
  if (!open) return std::unexpected(open.error());
  out.emplace(config.alarms, started_ms);
  out->restore(past, *open);
  return {};
}

}  // namespace

// The site_details rows of the configuration's sites (units as UCUM codes: units.hpp).
template <typename Sites>
std::vector<SiteSettings> site_settings(const Config& config, const Sites& sites) {
  std::vector<SiteSettings> out;
  for (const auto& site : config.sites) {
    const auto it = sites.find(site.id);
    if (it == sites.end()) continue;
    out.push_back(SiteSettings{
        .site = it->second->key,
        .name = site.name,
        .time_zone = config.timezone,
        .stage_unit = std::string(units::ucum(site.stage.units)),
        .length_unit = std::string(units::ucum_length(config.units)),
        .discharge_unit = std::string(units::ucum_discharge(config.units)),
        .volume_unit = std::string(units::ucum_volume(config.units)),
        .latitude = site.location ? std::optional(site.location->latitude) : std::nullopt,
        .longitude = site.location ? std::optional(site.location->longitude) : std::nullopt,
        .datum = site.datum});
  }
  return out;
}

Result<std::unique_ptr<Ingestor>> Ingestor::open(const Config& config,
                                                 const IngestorOptions& options, Clock clock) {
  auto store = Store::open(config.database, options.store);
  if (!store) return std::unexpected(store.error());
  auto state = std::make_unique<State>(config, options, std::move(clock), std::move(*store));
  const auto now = state->clock();
  state->opened_ms = now;
  // Before the site state is read from the store, so that a commit by another writer while it is
  // being read shows as a change.
  if (auto looked = state->store.stored_readings_changed(state->readings_seen); !looked) {
    return std::unexpected(looked.error());
  }
  if (options.keep_daily) {
    auto keeper = daily::DailyKeeper::create(state->config);
    if (!keeper) return std::unexpected(keeper.error());
    state->daily.emplace(std::move(*keeper));
  }
  for (const auto& site_config : state->config.sites) {
    auto site = std::make_unique<Site>(site_config);
    auto key = state->store.sites().ensure(site_config.id);
    if (!key) return std::unexpected(key.error());
    site->key = *key;
    auto history = SiteHistory::open(state->store, *key, site_config, state->config.units, now);
    if (!history) return std::unexpected(history.error());
    site->history.emplace(std::move(*history));
    // The checks of the latest period: live readings are the newest.
    site->checks = site->history->segments().back().keys->checks;
    site->checker = SiteChecker(site->checks);
    if (auto seeded = seed_checker(state->store, site->key, site->checker, site->newest_ms);
        !seeded) {
      return std::unexpected(seeded.error());
    }
    if (auto restored = restore_alarms(state->store, site->key, site_config, now, site->alarms);
        !restored) {
      return std::unexpected(restored.error());
    }
    // Daily figures: recomputes the site's stored figures if they were made with other settings.
    if (state->daily) {
      if (auto added = state->daily->add_site(state->store, site->key, site_config); !added) {
        return std::unexpected(added.error());
      }
    }
    state->sites.emplace(site_config.id, std::move(site));
  }
  // Before the site details are written: their change is the first the warehouse is told of.
  if (auto tracked = state->store.shipping().track(state->config.warehouse.has_value()); !tracked) {
    return std::unexpected(tracked.error());
  }
  if (auto described = state->store.sites().describe(site_settings(state->config, state->sites));
      !described) {
    return std::unexpected(described.error());
  }
  return std::unique_ptr<Ingestor>(new Ingestor(std::move(state)));
}

Ingestor::Ingestor(std::unique_ptr<State> state) : state_(std::move(state)) {}
Ingestor::~Ingestor() = default;

const Config& Ingestor::config() const { return state_->config; }
Store& Ingestor::store() { return state_->store; }
std::int64_t Ingestor::now_ms() const { return state_->clock(); }

bool Ingestor::has_site(std::string_view site_id) const {
  return state_->sites.find(site_id) != state_->sites.end();
}

Result<WriteBatch*> Ingestor::batch() {
  if (!state_->batch) {
    auto batch = state_->store.begin();
    if (!batch) return std::unexpected(batch.error());
    state_->batch.emplace(std::move(*batch));
    state_->batch_started_ms = state_->clock();
    state_->batch_readings = 0;
    // The write lock is held from here to the commit: no other connection can change the stored
    // readings in between, so what the copies are checked against now holds for the whole batch.
    if (auto refreshed = refresh_copies(); !refreshed) {
      state_->batch.reset();  // rolls back (nothing written yet)
      return std::unexpected(refreshed.error());
    }
  }
  return &*state_->batch;
}

Result<ReadingOutcome> Ingestor::reading(const Record& record, const SourcePosition& at) {
  // Between batches: a repeat of a stored reading is settled without opening one, so the copies
  // must be current before it is looked at.
  if (!state_->batch) {
    if (auto refreshed = refresh_copies(); !refreshed) return std::unexpected(refreshed.error());
  }
  const auto found = state_->sites.find(record.site);
  if (found == state_->sites.end()) {
    // The record parser checks sites; this guards callers that skip it.
    return fail(ErrorKind::not_found, fmt::format("unknown site '{}'", record.site));
  }
  Site& site = *found->second;

  // A repeat of a stored (site, time) is settled before the checks: a line read again after a
  // restart, or a second stage for a stored time, must not enter the site's check state, where it
  // would be a phantom neighbour (a false spike on the stored reading, a false unsteady on the
  // next). Readings in time order are later than everything stored and skip the look-up.
  if (site.newest_ms && record.time_ms <= *site.newest_ms) {
    auto stored_stage = state_->store.readings().stage_at(site.key, record.time_ms);
    if (!stored_stage) return std::unexpected(stored_stage.error());
    if (*stored_stage) return repeat(record, **stored_stage, at);
  }

  // A stage so large that its depth, or the discharge it would get, is not a finite number cannot
  // be stored, and the failed insert would spoil the whole batch (re-read, failing again, forever):
  // it is rejected before it reaches the checks. Only a reading inside the site's stage range gets
  // a discharge, and below the section's top the rating's discharges are finite.
  if (site.history->unusable(record.time_ms, record.stage)) {
    ReadingOutcome rejected{
        ReadingOutcome::Kind::rejected, "non_finite_stage",
        fmt::format("stage {} gives a depth or discharge too large to be a number", record.stage)};
    if (auto kept = reject(rejected.reject_kind, rejected.reason, at); !kept) {
      return std::unexpected(kept.error());
    }
    return rejected;
  }

  // The batch is opened before the checks change any state: opening it may refresh the copies (a
  // commit by another process just before), and then this reading is taken again from the top.
  const std::int64_t refreshes = state_->refreshes;
  auto batch = this->batch();
  if (!batch) return std::unexpected(batch.error());
  if (state_->refreshes != refreshes) return reading(record, at);

  // The checks in force at the reading's time (they change only at a change of the history).
  if (const ChecksSpec& in_force = site.history->segment_at(record.time_ms).keys->checks;
      !(in_force == site.checks)) {
    site.checks = in_force;
    site.checker = SiteChecker(site.checks);
    if (auto seeded = seed_checker(state_->store, site.key, site.checker, site.newest_ms);
        !seeded) {
      return std::unexpected(seeded.error());
    }
  }
  const CheckResult checked = site.checker.check(record.time_ms, record.stage, state_->clock());
  const ComputedReading computed =
      site.history->compute(record.time_ms, record.stage, checked.flags, checked.previous);
  StoredReading out;
  out.site = site.key;
  out.time_ms = record.time_ms;
  out.stage = record.stage;
  out.config = computed.config;
  out.flags = computed.flags;
  out.depth = computed.depth;
  out.discharge = computed.discharge;
  out.band = computed.band;
  out.discharge_jones = computed.discharge_jones;

  auto inserted = (*batch)->insert(out);
  if (!inserted) return std::unexpected(inserted.error());
  auto& pending = state_->pending;
  ReadingOutcome outcome;
  switch (inserted->outcome) {
    case InsertOutcome::stored:
      ++pending.stored;
      ++state_->batch_readings;
      if (!out.flags.has(Flag::future)) {
        site.newest_ms = std::max(site.newest_ms.value_or(out.time_ms), out.time_ms);
      }
      if (state_->daily)
        state_->daily->stored(site.key, {out.time_ms, out.discharge, out.flags, out.band});
      state_->count_flags(out.flags);
      if (site.alarms) {
        auto& events = state_->alarm_scratch;
        events.clear();
        site.alarms->reading({out.time_ms, out.stage, out.discharge, out.flags}, state_->clock(),
                             events);
        for (const auto& event : events) {
          if (auto kept = state_->store.alarms().record(**batch, site.key, event); !kept) {
            return std::unexpected(kept.error());
          }
          state_->alarm_log.emplace_back(&site, event);
        }
      }
      break;
    case InsertOutcome::duplicate:
    case InsertOutcome::conflict: {
      // Settled before the checks above; reached only if newest_ms missed a stored reading.
      auto repeated = repeat(record, inserted->stored_stage.value_or(0.0), at);
      if (!repeated) return repeated;
      outcome = std::move(*repeated);
      break;
    }
  }
  for (const auto& earlier : checked.earlier) {
    auto added = (*batch)->add_flags(site.key, earlier.time_ms, earlier.flags);
    if (!added) return std::unexpected(added.error());
    if (*added) {
      state_->count_flags(earlier.flags);
      if (state_->daily) state_->daily->flagged(site.key, earlier.time_ms, earlier.flags);
    }
  }
  return outcome;
}

Result<ReadingOutcome> Ingestor::repeat(const Record& record, double stored_stage,
                                        const SourcePosition& at) {
  auto& pending = state_->pending;
  // Exact comparison: the same text parses to the same double, and SQLite keeps REAL exactly.
  if (stored_stage == record.stage) {
    ++pending.duplicates;  // a re-read line: nothing to do
    return ReadingOutcome{ReadingOutcome::Kind::duplicate, {}, {}};
  }
  auto batch = this->batch();
  if (!batch) return std::unexpected(batch.error());
  ReadingOutcome conflict{
      ReadingOutcome::Kind::conflict, "conflict",
      fmt::format(
          "conflict: {} at this time is already stored with stage {}; the stored value is kept",
          record.site, stored_stage)};
  const std::string position = fmt::format("line {}", at.line);
  auto kept = (*batch)->add_reject({at.source, position, at.raw, conflict.reason, state_->clock()});
  if (!kept) return std::unexpected(kept.error());
  ++pending.rejected;
  ++pending.rejected_by_reason["conflict"];
  return conflict;
}

Result<void> Ingestor::reject(std::string_view kind, std::string_view reason,
                              const SourcePosition& at) {
  auto batch = this->batch();
  if (!batch) return std::unexpected(batch.error());
  const std::string position = fmt::format("line {}", at.line);
  const std::string text = fmt::format("{}: {}", kind, reason);
  auto kept = (*batch)->add_reject({at.source, position, at.raw, text, state_->clock()});
  if (!kept) return std::unexpected(kept.error());
  ++state_->pending.rejected;
  ++state_->pending.rejected_by_reason[std::string(kind)];
  ++state_->batch_readings;
  return {};
}

Result<std::int64_t> Ingestor::remove_rejects(std::string_view source) {
  auto batch = this->batch();
  if (!batch) return std::unexpected(batch.error());
  return (*batch)->remove_rejects(source);
}

Result<void> Ingestor::record_progress(std::string_view source_key,
                                       const IngestProgress& progress) {
  auto batch = this->batch();
  if (!batch) return std::unexpected(batch.error());
  return (*batch)->set_progress(source_key, progress);
}

bool Ingestor::batch_open() const { return state_->batch.has_value(); }

bool Ingestor::commit_due() const {
  if (!state_->batch) return false;
  return state_->batch_readings >= state_->options.max_batch_readings ||
         state_->clock() - state_->batch_started_ms >= state_->options.max_batch_age_ms;
}

Result<void> Ingestor::commit() {
  if (!state_->batch) return {};
  // Daily figures: recompute the (site, local day)s this batch's readings touched, inside its
  // transaction, so the figures are committed with the readings or not at all.
  if (state_->daily) {
    if (auto updated = state_->daily->update(state_->store, *state_->batch); !updated) {
      state_->batch.reset();  // rolls back
      state_->clear_pending();
      state_->alarm_log.clear();
      state_->notify(false);
      return updated;
    }
  }
  auto committed = state_->batch->commit();
  state_->batch.reset();
  if (!committed) {
    if (state_->daily) state_->daily->forget();
    state_->clear_pending();
    state_->alarm_log.clear();
    state_->notify(false);
    return committed;
  }
  state_->log_alarms();
  ++state_->pending.commits;
  state_->name_flag_counts();
  counts_.add(state_->pending);
  state_->clear_pending();
  state_->notify(true);
  return {};
}

void Ingestor::add_commit_observer(CommitObserver observer) {
  state_->observers.push_back(std::move(observer));
}

Result<void> Ingestor::reset() {
  state_->batch.reset();  // rolls back
  if (state_->daily) state_->daily->forget();
  state_->clear_pending();
  state_->alarm_log.clear();
  state_->notify(false);
  // The checks and alarms may have moved on with the dropped batch: back to what the store holds.
  return refresh_copies(/*force=*/true);
}

Result<void> Ingestor::refresh_copies(bool force) {
  auto changed = state_->store.stored_readings_changed(state_->readings_seen);
  if (!changed) return std::unexpected(changed.error());
  if (!*changed && !force) return {};
  // Another writer's readings may sit next to the ones coming, and rewritten readings have other
  // values: the checks must see them as neighbours (no false gap or spike), the alarms must replay
  // them, and the daily figures must read the open day back.
  ++state_->refreshes;
  if (state_->daily) state_->daily->forget();
  return reload_site_state();
}

Result<void> Ingestor::reload_site_state() {
  for (auto& [id, site] : state_->sites) {
    site->checker = SiteChecker(site->checks);
    if (auto seeded = seed_checker(state_->store, site->key, site->checker, site->newest_ms);
        !seeded) {
      return seeded;
    }
    if (auto restored = restore_alarms(state_->store, site->key, *site->config, state_->opened_ms,
                                       site->alarms);
        !restored) {
      return restored;
    }
  }
  return {};
}

Result<void> Ingestor::tick_alarms() {
  const std::int64_t now = state_->clock();
  for (auto& [id, site] : state_->sites) {
    if (!site->alarms) continue;
    auto& events = state_->alarm_scratch;
    events.clear();
    site->alarms->tick(now, events);
    if (events.empty()) continue;
    const std::int64_t refreshes = state_->refreshes;
    auto batch = this->batch();
    if (!batch) return std::unexpected(batch.error());
    // Opening the batch refreshed the evaluators (another process stored readings since they
    // were taken: an evaluator that has not seen them can only think the sensor quieter than it
    // is): judge again with what they hold now. With the batch open, that happens at most once.
    if (state_->refreshes != refreshes) return tick_alarms();
    for (const auto& event : events) {
      if (auto kept = state_->store.alarms().record(**batch, site->key, event); !kept) {
        return kept;
      }
      state_->alarm_log.emplace_back(site.get(), event);
    }
  }
  return {};
}

Result<std::optional<IngestProgress>> Ingestor::committed_progress(std::string_view source_key) {
  return state_->store.progress().committed(source_key);
}

}  // namespace stagewell
