// The store: readings, rejected lines and ingest progress in one SQLite database file.
//
// The schema (schema/NNN_name.sql, compiled in) is applied at open. Analysts read the database
// through two views, `discharge` and `rejects`, whose columns are a public contract (README, "The
// database").
//
// Durability: everything one batch of input produced — its readings, its rejects and how far its
// source has been read — is committed in ONE transaction (WriteBatch). After a crash the source is
// re-read from the stored offset, so no reading is lost and none is stored twice.
//
// Times are int64 milliseconds since the Unix epoch, UTC (names end in _ms). The store reads no
// clock: callers pass "now" so that tests can.
//
// A Store and its WriteBatch belong to one thread at a time. Several processes may open the same
// file: one writer and any number of read-only readers (WAL mode).
#pragma once

#include <compare>
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/sqlite.hpp"

namespace stagewell {

// A site's key in the database (sites.site_key).
struct SiteKey {
  std::int64_t value = 0;
  friend auto operator<=>(SiteKey, SiteKey) = default;
};

// A recorded configuration version (config_versions.config_id).
struct ConfigVersionId {
  std::int64_t value = 0;
  friend auto operator<=>(ConfigVersionId, ConfigVersionId) = default;
};

// One reading as stored.
struct StoredReading {
  SiteKey site;
  std::int64_t time_ms = 0;         // ms since the Unix epoch, UTC
  double stage = 0.0;               // the raw reading, site's stage units, exactly as received
  double depth = 0.0;               // configuration length unit (m or ft)
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
  ConfigVersionId config;  // the version that computed depth, discharge and flags
};

enum class InsertOutcome {
  stored,     // a new reading
  duplicate,  // the same site, time and stage is already stored: nothing changed (a re-read)
  conflict,   // the same site and time is stored with a different stage: nothing replaced; the
              // caller records the new line as a reject
};

struct InsertResult {
  InsertOutcome outcome = InsertOutcome::stored;
  std::optional<double> stored_stage;  // the stage already stored (duplicate and conflict)
};

// A line of input that could not be used.
struct Reject {
  std::string_view source;    // a file path or a socket peer
  std::string_view position;  // where in the source: "gauge.csv:123", "line 17"
  std::string_view raw;       // the line; only its first max_reject_raw_bytes are kept
  std::string_view reason;    // a sentence for a person
  std::int64_t received_ms = 0;
};

// Longest raw line kept in a reject (bytes). Longer lines are cut at a UTF-8 character boundary
// at or below this; the table keeps the full length (rejected_lines.raw_bytes).
inline constexpr std::size_t max_reject_raw_bytes = 4096;

// How far a source has been read.
struct IngestProgress {
  std::string file_identity;     // which file the offset belongs to, e.g. "2049:1311" (dev:inode)
  std::int64_t byte_offset = 0;  // bytes consumed
  std::int64_t updated_ms = 0;   // when it was written
};

struct StoreOptions {
  // How long one attempt waits for a lock another connection holds (SQLite's busy_timeout), ms.
  int busy_timeout_ms = 5000;
  // Attempts to begin or commit a batch while the database is busy, and the pause between them
  // (ms). After the last, the batch fails and nothing of it is stored: the caller re-reads.
  int busy_attempts = 5;
  int busy_pause_ms = 100;
};

class WriteBatch;

class Store {
 public:
  // Opens the database read-write, creating the file if it does not exist, and brings its schema
  // up to date. Fails (not_found) when the directory does not exist: creating directories is the
  // caller's job. Refuses a database newer than this program and another application's file.
  static Result<Store> open(const std::filesystem::path& path, const StoreOptions& options = {});
  // Opens an existing database for reading only. Requires the current schema version. In WAL
  // mode a reader needs the -shm file or write access to the directory (README, "The database").
  static Result<Store> open_read_only(const std::filesystem::path& path,
                                      const StoreOptions& options = {});

  Store(Store&&) noexcept;
  Store& operator=(Store&&) noexcept;
  ~Store();

  int schema_version() const;  // PRAGMA user_version
  bool read_only() const;

  // The key of site `id`, added on first use.
  // REQUIRES: read-write; no batch open.
  Result<SiteKey> ensure_site(std::string_view id);

  // Records the site's configuration (JSON text). The same text for the same site returns the
  // same id; a new text returns a new one. `now_ms` becomes its created time when it is new.
  // REQUIRES: read-write; no batch open.
  Result<ConfigVersionId> record_config(SiteKey site, std::string_view json, std::int64_t now_ms);

  // Starts a write transaction. Only one batch at a time.
  // REQUIRES: read-write. The batch does not outlive the store.
  Result<WriteBatch> begin();

  // How far `source` has been read; empty when it never was.
  Result<std::optional<IngestProgress>> committed_progress(std::string_view source);

  // The last `count` readings of `site` at or before `at_or_before_ms`, oldest first (to restore
  // the state of a site's checks at start-up).
  Result<std::vector<StoredReading>> recent_readings(SiteKey site, std::int64_t at_or_before_ms,
                                                     std::size_t count);

  // Number of stored readings, of all sites or of one (a scan of the table: not for the hot path).
  Result<std::int64_t> count_readings();
  Result<std::int64_t> count_readings(SiteKey site);

  // The stage stored for `site` at `time_ms`, empty when there is none. Sees the writes of the
  // batch open on this store, if any (one connection): the ingest path uses it to settle a repeat
  // of a stored (site, time) before the reading reaches the site's checks.
  Result<std::optional<double>> stored_stage(SiteKey site, std::int64_t time_ms);

  // For tests: called before every sqlite3_step (see sqlite::StepHook) to inject faults.
  void set_step_hook_for_testing(sqlite::StepHook hook);

  // The store's connection, for modules that keep their own tables in the same file (the daily
  // figures). Reads only: writes go through a WriteBatch's connection().
  sqlite::Connection& connection();

 private:
  friend class WriteBatch;
  struct Impl;
  explicit Store(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

// One transaction of writes: the readings, rejects and progress of one batch of input, stored
// together or not at all. Destroying an uncommitted batch rolls it back. After any call fails the
// batch is spoiled: commit() refuses and rolls back, so a failed insert can never be committed
// with the progress past it.
class WriteBatch {
 public:
  WriteBatch(WriteBatch&&) noexcept;
  WriteBatch& operator=(WriteBatch&&) = delete;
  WriteBatch(const WriteBatch&) = delete;
  WriteBatch& operator=(const WriteBatch&) = delete;
  ~WriteBatch();

  // Stores a reading unless its site and time are already stored (see InsertOutcome).
  // REQUIRES: stage, depth and discharge finite; site and config recorded.
  Result<InsertResult> insert(const StoredReading& reading);

  // ORs `flags` into a stored reading (a spike is recognised only a few readings later).
  // Returns false when no reading is stored at that site and time.
  Result<bool> add_flags(SiteKey site, std::int64_t time_ms, Flags flags);

  Result<void> add_reject(const Reject& reject);

  // Sets how far `source` has been read.
  Result<void> set_progress(std::string_view source, const IngestProgress& progress);

  // Commits everything, retrying while another connection holds the lock (StoreOptions). On
  // failure nothing of the batch is stored. Either way the batch is finished.
  Result<void> commit();

  // The connection the batch's transaction is open on, for modules that write their own tables
  // in the same transaction (the daily figures). A failure there must end in no commit().
  // REQUIRES: the batch is not finished.
  sqlite::Connection& connection();

 private:
  friend class Store;
  explicit WriteBatch(Store::Impl* store) : store_(store) {}
  Result<void> check_usable() const;
  template <typename T>
  Result<T> spoil_on_error(Result<T> result);
  void roll_back();

  Store::Impl* store_;  // null once finished (committed, rolled back, or moved from)
  bool spoiled_ = false;
};

}  // namespace stagewell
