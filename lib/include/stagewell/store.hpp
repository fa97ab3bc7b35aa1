// The store: one SQLite database file holding every table of stagewell — sites, configuration
// versions, readings, rejected lines, ingest progress, daily figures, alarm events and the record
// of recomputations. It alone writes SQL.
//
// The schema (schema/NNN_name.sql, compiled in) is applied at open. Analysts read the database
// through two views, `discharge` and `rejects`, whose columns are a public contract
// (docs/database.md, "The views").
//
// Durability: everything one batch of input produced — its readings, its rejects and how far its
// source has been read — is committed in ONE transaction (WriteBatch). After a crash the source is
// re-read from the stored offset, so no reading is lost and none is stored twice.
//
// Times are int64 milliseconds since the Unix epoch, UTC (names end in _ms). The store reads no
// clock: callers pass "now" so that tests can.
//
// Every table has a typed interface here (Store::readings(), daily(), alarms()...): no SQL is
// written outside the store. Writes go through a WriteBatch, so nothing is written outside a
// transaction and the fault hook (StepHook) sees every write.
//
// A Store and its WriteBatch belong to one thread at a time; a store on another thread has its own
// connection and shares nothing with this one (StoreReader, store_reader.hpp). Several processes
// may open the same file: one writer and any number of read-only readers (WAL mode). Waiting for
// a lock another connection holds: StoreOptions.
#pragma once

#include <cstdint>
#include <filesystem>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/alarm_table.hpp"
#include "stagewell/daily_table.hpp"
#include "stagewell/shipping_queue.hpp"
#include "stagewell/gaugings_table.hpp"
#include "stagewell/readings_table.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store_options.hpp"
#include "stagewell/store_tables.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

namespace store_detail {
struct BatchAccess;  // how the tables write through a WriteBatch
}

// What a caller last saw of the stored readings (Store::stored_readings_changed). A default one
// has seen nothing.
struct ReadingsMark {
  std::optional<std::int64_t> data_version;  // PRAGMA data_version: other connections' commits
  std::int64_t rewrites = 0;                 // the store's own rewrites, committed
  friend bool operator==(const ReadingsMark&, const ReadingsMark&) = default;
};

class Store {
 public:
  // Opens the database read-write, creating the file if it does not exist, and brings its schema
  // up to date. Fails (not_found) when the directory does not exist: creating directories is the
  // caller's job. Refuses a database newer than this program and another application's file.
  static Result<Store> open(const std::filesystem::path& path, const StoreOptions& options = {});
  // Opens an existing database for reading only. Requires the current schema version. In WAL
  // mode a reader needs the -shm file or write access to the directory (docs/database.md).
  static Result<Store> open_read_only(const std::filesystem::path& path,
                                      const StoreOptions& options = {});

  // SQLite's own check of an existing database file (PRAGMA integrity_check), read only, without
  // needing the file to be readable as a stagewell database: what it finds, one line each; empty
  // when the file is sound. Fails (not_found) without a file, (damaged) when SQLite cannot even
  // read it as a database.
  static Result<std::vector<std::string>> check_integrity(const std::filesystem::path& path);

  // How far a backup is: pages copied of the database's pages (SQLite's page counts).
  using BackupProgress = std::function<void(std::int64_t copied, std::int64_t total)>;
  struct BackupResult {
    std::int64_t pages = 0;
    std::int64_t bytes = 0;
  };
  // Copies the database at `path` to `destination` while others may write to it (SQLite's online
  // backup): the copy is the database as it was committed when the backup began, as one file of
  // its own (rollback journal, no -wal). Written under "<destination>.part" and renamed into place
  // once complete and synced, so `destination` never names half a copy. Fails when `destination`
  // exists (invalid_argument) or the database cannot be read.
  static Result<BackupResult> backup(const std::filesystem::path& path,
                                     const std::filesystem::path& destination,
                                     const BackupProgress& progress);

  Store(Store&&) noexcept;
  Store& operator=(Store&&) noexcept;
  ~Store();

  int schema_version() const;  // PRAGMA user_version
  bool read_only() const;

  // Starts a write transaction. Only one batch at a time.
  // REQUIRES: read-write. The batch does not outlive the store.
  Result<WriteBatch> begin();

  // The tables. Handles on this store's connection: they do not outlive it.
  SitesTable sites();
  VersionsTable versions();
  ReadingsTable readings();
  ProgressTable progress();
  DailyTable daily();
  AlarmTable alarms();
  RecomputationRunsTable recomputation_runs();
  GaugingsTable gaugings();
  ShippingQueue shipping();

  // Whether stored readings may have changed since `seen` was taken — committed by another
  // connection (another process), or rewritten through this store (ReadingsTable::rewrite) — and
  // `seen` becomes now. Readings this store's batches insert, and flags they add
  // (WriteBatch::insert, add_flags), do not count: their writer keeps its copies itself. Whoever
  // keeps copies of stored readings in memory asks this before using them, and reads them again
  // when it says true. A default `seen` has seen nothing: true.
  // REQUIRES: no batch open, or one that has not rewritten readings yet.
  Result<bool> stored_readings_changed(ReadingsMark& seen);

  // For tests: called before every step of a statement (StepHook) to inject faults.
  void set_step_hook_for_testing(StepHook hook);

 private:
  explicit Store(std::unique_ptr<store_detail::Core> core);
  std::unique_ptr<store_detail::Core> core_;
};

// One transaction of writes: the readings, rejects and progress of one batch of input, and
// whatever the tables write with them (daily figures, alarm events...), stored together or not at
// all. Destroying an uncommitted batch rolls it back. After any call of the batch's own fails the
// batch is spoiled: commit() refuses and rolls back, so a failed insert can never be committed
// with the progress past it. A table's failed write (Store::daily(), alarms()...) leaves the batch
// to its caller, who must not commit what should not be committed without it.
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

  // ORs `flags` into a stored reading (a spike is recognised only a few readings later): the
  // ingest's own flags, not a rewrite (Store::stored_readings_changed). Returns false when no
  // reading is stored at that site and time.
  Result<bool> add_flags(SiteKey site, std::int64_t time_ms, Flags flags);

  Result<void> add_reject(const Reject& reject);
  // Removes every reject kept from `source` (a file about to be read again from its start, whose
  // lines will be judged anew). Returns how many were removed.
  Result<std::int64_t> remove_rejects(std::string_view source);

  // Sets how far `source` has been read.
  Result<void> set_progress(std::string_view source, const IngestProgress& progress);

  // Commits everything, waiting while another connection holds the lock (StoreOptions). On
  // failure nothing of the batch is stored. Either way the batch is finished.
  Result<void> commit();

 private:
  friend struct store_detail::BatchAccess;
  explicit WriteBatch(store_detail::Core* store) : store_(store) {}
  Result<void> check_usable() const;
  template <typename T>
  Result<T> spoil_on_error(Result<T> result);
  void roll_back();

  store_detail::Core* store_;  // null once finished (committed, rolled back, or moved from)
  bool spoiled_ = false;
  bool rewrote_readings_ = false;  // ReadingsTable::rewrite was called in this batch
};

}  // namespace stagewell
