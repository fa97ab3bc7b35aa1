// What a Store holds, shared by the files that implement the store and its tables, and how the
// tables write through a WriteBatch.
#pragma once

#include <memory>
#include <optional>
#include <string_view>
#include <type_traits>
#include <unordered_map>
#include <utility>
#include <vector>

#include "stagewell/store.hpp"
#include "store/sqlite.hpp"

namespace stagewell::store_detail {

// Readings inserted with one statement of this many rows when they are known to be new (later than
// everything stored for their site): the per-statement work of SQLite is shared among them.
inline constexpr std::size_t kReadingsPerInsert = 64;

struct Core final : sqlite::HeldWrites {
  std::unique_ptr<sqlite::Connection> connection;
  StoreOptions options;
  int schema_version = 0;
  bool batch_open = false;
  // The per-reading INSERT, held once prepared so that each reading skips the statement cache's
  // look-up (which hashes the SQL text). Owned by the connection's cache.
  sqlite::Statement* insert_reading = nullptr;
  sqlite::Statement* insert_readings = nullptr;  // kReadingsPerInsert rows, held likewise

  // Readings of the open batch known to be new, not yet inserted: written kReadingsPerInsert at a
  // time, and the rest before any other statement of the connection steps (HeldWrites), so that
  // every read, update and the COMMIT see them. Dropped when the batch rolls back.
  std::vector<StoredReading> held_readings;
  // Each site's latest stored time in the open batch (its write lock held, no other connection
  // can add one), looked up once per site and batch; nullopt for a site with none stored.
  std::unordered_map<std::int64_t, std::optional<std::int64_t>> latest_ms;
  // Held readings were found stored already (never, under the write lock): the outcomes given for
  // them were wrong, and the batch cannot be committed.
  bool held_failed = false;
  // Batches committed that rewrote stored readings (Store::stored_readings_changed).
  std::int64_t readings_rewrites = 0;
  // (site_key, time_ms) of the readings the open batch changed behind their site's latest stored
  // one: late inserts, flags added, recomputed values. Logged as time ranges for the warehouse
  // when the batch commits (shipping_queue.cpp), unless nothing ships.
  std::vector<std::pair<std::int64_t, std::int64_t>> changed_behind;

  void changed_reading(SiteKey site, std::int64_t time_ms) {
    changed_behind.emplace_back(site.value, time_ms);
  }

  sqlite::Connection& db() { return *connection; }

  // WriteBatch::insert: held when known new, else inserted at once (write_batch.cpp).
  Result<InsertResult> insert(const StoredReading& reading);
  // Forgets held readings and latest times: at the start and end of every batch.
  void end_of_batch();
  bool any() const override { return !held_readings.empty(); }
  Result<void> write() override;  // the held readings

  // Fails (invalid_argument) on a read-only store, naming what was attempted.
  Result<void> require_writable(std::string_view doing) const;
  // Fails (invalid_argument) while a batch is open: SitesTable::ensure and VersionsTable::record
  // run in their own transactions, which would otherwise join the batch and vanish if it rolls
  // back.
  Result<void> require_no_batch(std::string_view doing) const;
};

// Statements on `readings` that the batch's own writes and ReadingsTable share
// (readings_table.cpp).
Result<std::optional<double>> stored_stage(sqlite::Connection& connection, SiteKey site,
                                           std::int64_t time_ms);
// Logs the batch's changed_behind readings for the warehouse, as ranges (shipping_queue.cpp).
// Writes nothing while the store does not ship.
Result<void> log_changed_readings(Core& core);

// ORs `flags` into a stored reading; false when there is none at that site and time.
Result<bool> or_flags(sqlite::Connection& connection, SiteKey site, std::int64_t time_ms,
                      Flags flags);

// How a table writes in a batch: `write` gets the connection once the batch is known to be open
// on `core`. A failed write does not spoil the batch (unlike the batch's own writes): SQLite undoes
// the failed statement, and the caller decides whether the rest is committed (the alarms' unique
// index refuses a second open alarm and the batch goes on; the ingest rolls back when the daily
// figures cannot be written).
struct BatchAccess {
  // Store::begin().
  static Result<WriteBatch> begin(Core& core);

  template <typename Write>
  static auto write(WriteBatch& batch, Core* core, Write&& write)
      -> std::invoke_result_t<Write, sqlite::Connection&> {
    using R = std::invoke_result_t<Write, sqlite::Connection&>;
    if (auto ok = batch.check_usable(); !ok) return R(std::unexpected(ok.error()));
    if (batch.store_ != core) {
      return R(fail(ErrorKind::invalid_argument, "a write batch of another store was given"));
    }
    return std::forward<Write>(write)(core->db());
  }
  // The batch rewrote stored readings: counted when it commits.
  static void rewrote_readings(WriteBatch& batch) { batch.rewrote_readings_ = true; }
};

// Runs `write(batch)` in a batch of its own, committed when it succeeds (rolled back otherwise):
// for the writes that come before any batch of input (SitesTable::ensure, VersionsTable::record).
// REQUIRES: read-write; no batch open (`doing` names the write in the refusal).
template <typename Write>
auto in_own_batch(Core& core, std::string_view doing, Write&& write)
    -> std::invoke_result_t<Write, WriteBatch&> {
  using R = std::invoke_result_t<Write, WriteBatch&>;
  if (auto ok = core.require_writable(doing); !ok) return R(std::unexpected(ok.error()));
  if (auto ok = core.require_no_batch(doing); !ok) return R(std::unexpected(ok.error()));
  auto batch = BatchAccess::begin(core);
  if (!batch) return R(std::unexpected(batch.error()));
  R result = std::forward<Write>(write)(*batch);
  if (!result) return result;  // the batch rolls back as it goes
  if (auto committed = batch->commit(); !committed) return R(std::unexpected(committed.error()));
  return result;
}

}  // namespace stagewell::store_detail
