// The ingest pipeline's core: a parsed record -> depth, checks, rating -> a stored reading, with
// rejects and source progress written in the same transaction (see store.hpp, "Durability").
//
// Each stored reading also goes through its site's alarms (alarms.hpp); raised and cleared alarms
// are written in the same transaction and logged once it commits.
//
// Every source (drop folder, tailed file, socket, `stagewell ingest`) feeds one Ingestor, which
// owns the store connection, the per-site rating tables and check state, and the open batch.
// Batches are committed when they reach `max_batch_readings` or are older than `max_batch_age_ms`
// — whichever comes first — so that throughput stays high and a live reading is visible within
// about a second.
//
// The Ingestor keeps three copies of recent stored readings in memory: each site's checks' window,
// its alarms' replay, and the daily figures' copy of the open day. Whenever the stored readings
// change otherwise than through its own batches — another process's commits, or readings rewritten
// through the same store (a recomputation, recomputation.hpp) — it reads all three again. It asks
// the store (Store::stored_readings_changed) in one place: when it opens a batch, and before it
// checks a reading while none is open. Nobody needs to tell it.
//
// Not thread-safe: it belongs to the thread that runs the sources (the daemon's io_context).
#pragma once

#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/config.hpp"
#include "stagewell/records.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

// What was done, for logs, summaries and metrics. Counts since the Ingestor was opened.
struct IngestCounts {
  std::int64_t stored = 0;      // new readings stored
  std::int64_t duplicates = 0;  // repeats of a stored (site, time, stage): nothing done
  std::int64_t rejected = 0;    // lines kept in rejects (including conflicts)
  std::map<std::string, std::int64_t, std::less<>>
      rejected_by_reason;                                            // RejectKind name, "conflict"
  std::map<std::string, std::int64_t, std::less<>> flagged_by_flag;  // flag name -> readings
  std::int64_t commits = 0;

  void add(const IngestCounts& other);
};

struct IngestorOptions {
  std::int64_t max_batch_readings = 20000;
  std::int64_t max_batch_age_ms = 1000;
  StoreOptions store;
  // Keep the daily figures current in each batch's transaction (daily_keeper.hpp). Off only to
  // measure what keeping them costs (tests/bench); the figures are then stale.
  bool keep_daily = true;
};

// Milliseconds since the epoch; injectable so tests control "now" (the `future` check).
using Clock = std::function<std::int64_t()>;

// What became of a record given to Ingestor::reading().
struct ReadingOutcome {
  enum class Kind {
    stored,     // a new reading, in the open batch
    duplicate,  // its site, time and stage are stored already: nothing was done
    conflict,   // its site and time are stored with another stage, which is kept: the line went
                // to rejects as "conflict"
    rejected,   // it cannot be stored (a stage too large to compute with): the line went to
                // rejects as `reject_kind`
  };
  Kind kind = Kind::stored;
  std::string_view reject_kind;  // conflict and rejected: the name counted ("conflict", ...)
  std::string reason;            // conflict and rejected: a sentence for a person
};

// Where a record or a reject came from.
struct SourcePosition {
  std::string_view source;  // the source's name: a file path, "tcp 127.0.0.1:50312"
  std::int64_t line = 0;    // 1-based line number within the source's stream
  std::string_view raw;     // the line as read, kept with a reject
};

class Ingestor {
 public:
  // Opens (creating if needed) the configured database, records each site's configuration version
  // and restores each site's check state from its stored readings.
  static Result<std::unique_ptr<Ingestor>> open(const Config& config,
                                                const IngestorOptions& options, Clock clock);
  ~Ingestor();

  // Known site? (For the record parser.)
  bool has_site(std::string_view site_id) const;

  // Converts, checks and stores one record, and says what became of it. Fails only when the store
  // fails (the batch is then spoiled: see commit()).
  Result<ReadingOutcome> reading(const Record& record, const SourcePosition& at);

  // Keeps a line that could not be used. `kind` is a short name counted in the summary and
  // metrics (a RejectKind name, or "bad_header"); `reason` a sentence for a person.
  Result<void> reject(std::string_view kind, std::string_view reason, const SourcePosition& at);

  // Removes the rejects kept from `source` (SourcePosition::source), in the open batch: for a
  // source read again from its start. Returns how many were removed.
  Result<std::int64_t> remove_rejects(std::string_view source);

  // Records how far `source_key` has been read; committed with the readings before it.
  Result<void> record_progress(std::string_view source_key, const IngestProgress& progress);

  // True when the open batch should be committed now (size or age).
  bool commit_due() const;
  // True while a batch is open. When none is, everything fed so far is settled: committed, or a
  // repeat of a stored reading that needed no batch (a socket source acknowledges it then).
  bool batch_open() const;
  // Commits the open batch, if any. On failure nothing of it is stored; the caller must re-read
  // every source from its stored progress (reset()).
  Result<void> commit();
  // Drops the open batch and restores the check state from the store (after a failed commit).
  Result<void> reset();

  // Called after every commit attempt: true when the batch is stored, false when it was dropped
  // (failed commit or reset()). A socket source acknowledges what it fed before a successful
  // commit, and drops its connections after a failed one so that clients resend.
  using CommitObserver = std::function<void(bool committed)>;
  void add_commit_observer(CommitObserver observer);

  // The clock moved on: raises the alarms judged by the clock (a sensor gone quiet, alarms.hpp)
  // in the open batch, opening one when there is something to write. The daemon calls it every
  // few seconds and then commits. Alarms judged by readings are evaluated in reading().
  Result<void> tick_alarms();

  // Progress stored for a source (committed state).
  Result<std::optional<IngestProgress>> committed_progress(std::string_view source_key);

  const IngestCounts& counts() const { return counts_; }
  const Config& config() const;
  Store& store();
  std::int64_t now_ms() const;

 private:
  struct Site;
  struct State;
  explicit Ingestor(std::unique_ptr<State> state);
  // The open batch, opening one (and refreshing the copies, if the stored readings changed) when
  // none is.
  Result<WriteBatch*> batch();
  // The one place the in-memory copies of stored readings are refreshed: when the store says they
  // changed since the last look (or always, when `force`), the checks' and alarms' state is
  // rebuilt from the store and the daily keeper forgets its copy.
  // REQUIRES: no batch open, or one just opened (nothing of it in the copies yet).
  Result<void> refresh_copies(bool force = false);
  // Rebuilds each site's check state and alarm evaluator from the store.
  Result<void> reload_site_state();
  // A record whose (site, time) is stored with `stored_stage`: a no-op when the stage is the
  // same, a 'conflict' reject when not (stored values are never replaced).
  Result<ReadingOutcome> repeat(const Record& record, double stored_stage,
                                const SourcePosition& at);

  std::unique_ptr<State> state_;
  IngestCounts counts_;
};

}  // namespace stagewell
