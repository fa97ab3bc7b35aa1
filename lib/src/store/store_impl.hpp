// What a Store holds, shared by the files that implement Store and WriteBatch.
#pragma once

#include <memory>
#include <string_view>

#include "stagewell/sqlite.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

struct Store::Impl {
  std::unique_ptr<sqlite::Connection> connection;
  StoreOptions options;
  int schema_version = 0;
  bool batch_open = false;
  // The per-reading INSERT, held once prepared so that each reading skips the statement cache's
  // look-up (which hashes the SQL text). Owned by the connection's cache.
  sqlite::Statement* insert_reading = nullptr;

  // Runs `sql` (BEGIN IMMEDIATE, COMMIT) until it succeeds, retrying while another connection
  // holds the lock, up to options.busy_attempts times. A COMMIT that fails with SQLITE_BUSY
  // leaves the transaction open (SQLite's documented behaviour), so it can simply be run again.
  Result<void> run_retrying_busy(std::string_view sql);

  // Fails (invalid_argument) on a read-only store, naming what was attempted.
  Result<void> require_writable(std::string_view doing) const;
  // Fails (invalid_argument) while a batch is open: ensure_site and record_config run in their
  // own transactions, which would otherwise join the batch and vanish if it rolls back.
  Result<void> require_no_batch(std::string_view doing) const;
};

}  // namespace stagewell
