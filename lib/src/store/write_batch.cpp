// The write transaction: readings, rejects and progress of one batch of input, all or nothing.
#include <fmt/format.h>

#include <cmath>
#include <string>

#include "stagewell/store.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

using store_detail::kReadingsPerInsert;

bool is_continuation_byte(char c) { return (static_cast<unsigned char>(c) & 0xC0) == 0x80; }

// The first max_reject_raw_bytes of `raw`, moved back to a UTF-8 character boundary so the kept
// text stays valid UTF-8 (a character is at most 4 bytes: at most 3 continuation bytes to skip).
std::string_view cut_raw_line(std::string_view raw) {
  if (raw.size() <= max_reject_raw_bytes) return raw;
  std::size_t end = max_reject_raw_bytes;
  for (int i = 0; i < 3 && end > 0 && is_continuation_byte(raw[end]); ++i) --end;
  return raw.substr(0, end);
}

Result<void> check_finite(const StoredReading& reading) {
  const auto finite_or_none = [](const std::optional<double>& value) {
    return !value || std::isfinite(*value);
  };
  const bool finite = std::isfinite(reading.stage) && std::isfinite(reading.depth) &&
                      finite_or_none(reading.discharge) && finite_or_none(reading.band) &&
                      finite_or_none(reading.discharge_jones);
  if (finite) return {};
  // SQLite would store NaN as NULL and infinities as values no view can explain.
  return fail(ErrorKind::invalid_argument,
              fmt::format("reading at {} ms has a stage, depth or discharge that is not a finite "
                          "number; not stored",
                          reading.time_ms));
}

// The columns an INSERT of a reading binds, from parameter `first` on (bind_reading).
constexpr std::size_t kReadingColumns = 8;

void bind_reading(sqlite::Statement& s, int first, const StoredReading& reading) {
  s.bind(first, reading.site.value);
  s.bind(first + 1, reading.time_ms);
  s.bind(first + 2, reading.stage);
  s.bind(first + 3, reading.discharge);  // depth is not stored: the version's terms give it
  s.bind(first + 4, static_cast<std::int64_t>(reading.flags.bits()));
  s.bind(first + 5, reading.config.value);
  store_detail::bind_optional(s, first + 6, store_detail::band_bp(reading.band));
  store_detail::bind_optional(s, first + 7,
                              store_detail::jones_bp(reading.discharge, reading.discharge_jones));
}

// The reading INSERT on loan. `held` keeps it once prepared (Core::insert_reading). Every
// parameter is bound for each reading, so the loan keeps the bindings instead of clearing them.
Result<sqlite::CachedStatement> reading_insert(sqlite::Connection& connection,
                                               sqlite::Statement*& held) {
  using Loan = sqlite::CachedStatement;
  if (held != nullptr) return Loan(held, Loan::Bindings::keep);
  auto insert = connection.cached(
      "INSERT INTO readings (site_key, time_ms, stage, discharge, flags, config_id, band_bp, "
      "jones_bp) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8) "
      "ON CONFLICT (site_key, time_ms) DO NOTHING");
  if (insert) held = &**insert;
  return insert;
}

Result<InsertResult> insert_reading(sqlite::Connection& connection, sqlite::Statement*& held,
                                    const StoredReading& reading) {
  if (auto ok = check_finite(reading); !ok) return std::unexpected(ok.error());
  {
    auto insert = reading_insert(connection, held);
    if (!insert) return std::unexpected(insert.error());
    auto& s = **insert;
    bind_reading(s, 1, reading);
    if (auto done = s.run(); !done) return std::unexpected(done.error());
  }
  if (connection.changes() == 1) return InsertResult{InsertOutcome::stored, std::nullopt};

  // Already stored: the common case is a source read again after a crash (same stage).
  auto stored = store_detail::stored_stage(connection, reading.site, reading.time_ms);
  if (!stored) return std::unexpected(stored.error());
  if (!*stored) return fail(ErrorKind::database, "a reading was neither inserted nor found");
  // Exact comparison: the same text parses to the same double, and SQLite stores REAL exactly.
  const auto outcome =
      **stored == reading.stage ? InsertOutcome::duplicate : InsertOutcome::conflict;
  return InsertResult{outcome, *stored};
}

// The INSERT of kReadingsPerInsert readings, on loan like reading_insert's.
Result<sqlite::CachedStatement> readings_insert(sqlite::Connection& connection,
                                                sqlite::Statement*& held) {
  using Loan = sqlite::CachedStatement;
  if (held != nullptr) return Loan(held, Loan::Bindings::keep);
  std::string sql =
      "INSERT INTO readings (site_key, time_ms, stage, discharge, flags, config_id, band_bp, "
      "jones_bp) VALUES ";
  for (std::size_t i = 0; i < kReadingsPerInsert; ++i) {
    sql += i == 0 ? "(?,?,?,?,?,?,?,?)" : ",(?,?,?,?,?,?,?,?)";
  }
  sql += " ON CONFLICT (site_key, time_ms) DO NOTHING";
  auto insert = connection.cached(sql);
  if (insert) held = &**insert;
  return insert;
}

// The latest stored time of `site`, nullopt when it has none.
Result<std::optional<std::int64_t>> latest_stored_ms(sqlite::Connection& connection, SiteKey site) {
  auto select = connection.cached("SELECT max(time_ms) FROM readings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  auto row = store_detail::first_row(**select, [](const auto& s) {
    return s.column_is_null(0) ? std::optional<std::int64_t>() : s.column_int64(0);
  });
  if (!row) return std::unexpected(row.error());
  return row->value_or(std::nullopt);
}

// BEGIN IMMEDIATE, COMMIT, ROLLBACK. A lock another connection holds is waited for inside the
// step (StoreOptions).
Result<void> run(sqlite::Connection& connection, std::string_view sql) {
  auto statement = connection.cached(sql);
  if (!statement) return std::unexpected(statement.error());
  return (*statement)->run();
}

}  // namespace

Result<InsertResult> store_detail::Core::insert(const StoredReading& reading) {
  if (auto ok = check_finite(reading); !ok) return std::unexpected(ok.error());
  auto latest = latest_ms.find(reading.site.value);
  if (latest == latest_ms.end()) {
    auto stored = latest_stored_ms(*connection, reading.site);
    if (!stored) return std::unexpected(stored.error());
    latest = latest_ms.emplace(reading.site.value, *stored).first;
  }
  if (latest->second && reading.time_ms <= *latest->second) {
    // Maybe stored already: inserted at once, to tell a repeat from a new reading. The held ones
    // go first, and explicitly: writing them uses the statement this insert binds.
    if (auto written = connection->write_held(); !written) {
      return std::unexpected(written.error());
    }
    auto inserted = stagewell::insert_reading(*connection, insert_reading, reading);
    if (inserted && inserted->outcome == InsertOutcome::stored) {
      changed_reading(reading.site, reading.time_ms);
    }
    return inserted;
  }
  // Later than everything stored for its site: certainly new, and held to be inserted with
  // others. The outcome is known now; a failure to write it fails the statement that tried (this
  // insert, or whichever runs next), and so the batch.
  latest->second = reading.time_ms;
  held_readings.push_back(reading);
  if (held_readings.size() == kReadingsPerInsert) {
    if (auto written = connection->write_held(); !written) {
      return std::unexpected(written.error());
    }
  }
  return InsertResult{InsertOutcome::stored, std::nullopt};
}

Result<void> store_detail::Core::write() {
  // A failed statement leaves the readings it did not write held: they are tried again before
  // the next statement, so that the batch stays whole whatever its caller then decides.
  auto& rows = held_readings;
  std::size_t found_stored = 0;
  if (rows.size() == kReadingsPerInsert) {
    auto insert = readings_insert(*connection, insert_readings);
    if (!insert) return std::unexpected(insert.error());
    for (std::size_t i = 0; i < rows.size(); ++i) {
      bind_reading(**insert, static_cast<int>(kReadingColumns * i + 1), rows[i]);
    }
    if (auto done = (*insert)->run(); !done) return std::unexpected(done.error());
    found_stored = rows.size() - static_cast<std::size_t>(connection->changes());
  } else {
    std::size_t written = 0;
    for (const auto& row : rows) {
      auto inserted = stagewell::insert_reading(*connection, insert_reading, row);
      if (!inserted) {
        rows.erase(rows.begin(), rows.begin() + static_cast<std::ptrdiff_t>(written));
        return std::unexpected(inserted.error());
      }
      ++written;
      if (inserted->outcome != InsertOutcome::stored) ++found_stored;
    }
  }
  const std::size_t count = rows.size();
  rows.clear();
  if (found_stored > 0) {
    // Cannot happen while the batch holds the write lock; if it did, the outcomes already given
    // for these readings would be wrong, so the batch must not be committed.
    held_failed = true;
    return fail(ErrorKind::database,
                fmt::format("{} of {} readings held as new were stored already; the batch is "
                            "dropped",
                            found_stored, count));
  }
  return {};
}

void store_detail::Core::end_of_batch() {
  held_readings.clear();
  changed_behind.clear();
  latest_ms.clear();
  held_failed = false;
}

Result<WriteBatch> Store::begin() { return store_detail::BatchAccess::begin(*core_); }

Result<WriteBatch> store_detail::BatchAccess::begin(Core& core) {
  if (auto ok = core.require_writable("begin a write batch"); !ok) {
    return std::unexpected(ok.error());
  }
  if (core.batch_open) {
    return fail(ErrorKind::invalid_argument, "a write batch is already open on this store");
  }
  auto& connection = core.db();
  // A transaction left open by a ROLLBACK that itself failed: end it before starting anew.
  if (connection.in_transaction()) {
    if (auto ok = run(connection, "ROLLBACK"); !ok) return std::unexpected(ok.error());
  }
  // IMMEDIATE takes the write lock now. A deferred transaction that reads (the duplicate check)
  // and then writes can fail half-way with a busy error no waiting can cure, when another
  // connection wrote in between (SQLITE_BUSY_SNAPSHOT).
  if (auto ok = run(connection, "BEGIN IMMEDIATE"); !ok) return std::unexpected(ok.error());
  core.end_of_batch();
  core.batch_open = true;
  return WriteBatch(&core);
}

WriteBatch::WriteBatch(WriteBatch&& other) noexcept
    : store_(std::exchange(other.store_, nullptr)),
      spoiled_(other.spoiled_),
      rewrote_readings_(other.rewrote_readings_) {}

WriteBatch::~WriteBatch() { roll_back(); }

Result<void> WriteBatch::check_usable() const {
  if (store_ != nullptr) return {};
  return fail(ErrorKind::invalid_argument,
              "this write batch is finished (committed or rolled back)");
}

template <typename T>
Result<T> WriteBatch::spoil_on_error(Result<T> result) {
  if (!result) spoiled_ = true;
  return result;
}

Result<InsertResult> WriteBatch::insert(const StoredReading& reading) {
  if (auto ok = check_usable(); !ok) return std::unexpected(ok.error());
  return spoil_on_error(store_->insert(reading));
}

Result<bool> WriteBatch::add_flags(SiteKey site, std::int64_t time_ms, Flags flags) {
  if (auto ok = check_usable(); !ok) return std::unexpected(ok.error());
  auto updated = store_detail::or_flags(*store_->connection, site, time_ms, flags);
  if (updated && *updated) store_->changed_reading(site, time_ms);
  return spoil_on_error(std::move(updated));
}

Result<void> WriteBatch::add_reject(const Reject& reject) {
  if (auto ok = check_usable(); !ok) return ok;
  auto insert = store_->connection->cached(
      "INSERT INTO rejected_lines (source, position, raw, raw_bytes, reason, received_ms) "
      "VALUES (?1, ?2, ?3, ?4, ?5, ?6)");
  if (!insert) return spoil_on_error(Result<void>(std::unexpected(insert.error())));
  auto& s = **insert;
  s.bind(1, reject.source);
  s.bind(2, reject.position);
  s.bind(3, cut_raw_line(reject.raw));
  s.bind(4, static_cast<std::int64_t>(reject.raw.size()));
  s.bind(5, reject.reason);
  s.bind(6, reject.received_ms);
  return spoil_on_error(s.run());
}

Result<std::int64_t> WriteBatch::remove_rejects(std::string_view source) {
  if (auto ok = check_usable(); !ok) return std::unexpected(ok.error());
  auto remove = store_->connection->cached("DELETE FROM rejected_lines WHERE source = ?1");
  if (!remove) return spoil_on_error(Result<std::int64_t>(std::unexpected(remove.error())));
  auto& s = **remove;
  s.bind(1, source);
  if (auto ran = s.run(); !ran) {
    return spoil_on_error(Result<std::int64_t>(std::unexpected(ran.error())));
  }
  return store_->connection->changes();
}

Result<void> WriteBatch::set_progress(std::string_view source, const IngestProgress& progress) {
  if (auto ok = check_usable(); !ok) return ok;
  if (progress.byte_offset < 0) {
    return spoil_on_error(Result<void>(
        fail(ErrorKind::invalid_argument,
             fmt::format("negative byte offset {} for source {}", progress.byte_offset, source))));
  }
  auto upsert = store_->connection->cached(
      "INSERT INTO ingest_progress (source, file_identity, byte_offset, updated_ms) "
      "VALUES (?1, ?2, ?3, ?4) ON CONFLICT (source) DO UPDATE SET "
      "file_identity = excluded.file_identity, byte_offset = excluded.byte_offset, "
      "updated_ms = excluded.updated_ms");
  if (!upsert) return spoil_on_error(Result<void>(std::unexpected(upsert.error())));
  auto& s = **upsert;
  s.bind(1, source);
  s.bind(2, std::string_view(progress.file_identity));
  s.bind(3, progress.byte_offset);
  s.bind(4, progress.updated_ms);
  return spoil_on_error(s.run());
}

Result<void> WriteBatch::commit() {
  if (auto ok = check_usable(); !ok) return ok;
  if (spoiled_ || store_->held_failed) {
    roll_back();
    return fail(ErrorKind::invalid_argument,
                "a write batch in which a call failed cannot be committed; it was rolled back");
  }
  if (auto logged = store_detail::log_changed_readings(*store_); !logged) {
    roll_back();
    return logged;
  }
  // A COMMIT that meets a lock waits inside its step (StoreOptions); one that fails for good is
  // rolled back, leaving nothing of the batch behind.
  auto committed = run(*store_->connection, "COMMIT");
  if (!committed) {
    roll_back();
    return committed;
  }
  if (rewrote_readings_) ++store_->readings_rewrites;
  store_->end_of_batch();
  store_->batch_open = false;
  store_ = nullptr;
  return {};
}

void WriteBatch::roll_back() {
  if (store_ == nullptr) return;
  auto& connection = *store_->connection;
  store_->end_of_batch();  // held readings go with the batch, unwritten
  if (connection.in_transaction()) {
    // If even this fails, the transaction stays open and the next begin() ends it.
    (void)run(connection, "ROLLBACK");
  }
  store_->batch_open = false;
  store_ = nullptr;
}

}  // namespace stagewell
