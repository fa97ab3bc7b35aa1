#include "store/sqlite.hpp"

#include <fmt/format.h>
#include <sqlite3.h>

#include <algorithm>

namespace stagewell::sqlite {
namespace {

// Enough of a statement's SQL to recognise it in a message.
std::string excerpt(std::string_view sql) {
  constexpr std::size_t max_chars = 80;
  std::string out;
  for (char c : sql.substr(0, max_chars)) out += (c == '\n' || c == '\t') ? ' ' : c;
  if (sql.size() > max_chars) out += "...";
  return out;
}

// SQLITE_CORRUPT (a malformed page, index or record) and SQLITE_NOTADB (a file that is not, or no
// longer, a database): the file itself is damaged, and no retry can help.
bool is_damage(int code) {
  return (code & 0xff) == SQLITE_CORRUPT || (code & 0xff) == SQLITE_NOTADB;
}

}  // namespace

Error to_error(int code, sqlite3* db, std::string_view doing, bool cancelled) {
  if (cancelled) {
    return Error{ErrorKind::cancelled,
                 fmt::format("stopped waiting for a lock another connection holds while {}: the "
                             "wait was cancelled",
                             doing)};
  }
  // After an injected fault (or a later call) the connection's message belongs to another code.
  const bool own_message = db != nullptr && sqlite3_extended_errcode(db) == code;
  const char* text = own_message ? sqlite3_errmsg(db) : sqlite3_errstr(code);
  if (is_damage(code)) {
    const char* file = db != nullptr ? sqlite3_db_filename(db, "main") : nullptr;
    return Error{
        ErrorKind::damaged,
        fmt::format("the database file {} is damaged (SQLite, while {}: {}, code {}); "
                    "stop the service, keep a copy of the file, and restore the latest "
                    "backup (docs/operations.md, \"A damaged database\"); `stagewell check "
                    "--database` lists what SQLite finds",
                    file != nullptr && *file != '\0' ? file : "(unknown)", doing, text, code)};
  }
  return Error{ErrorKind::database,
               fmt::format("SQLite error while {}: {} (code {})", doing, text, code)};
}

bool is_busy(int code) { return (code & 0xff) == SQLITE_BUSY; }

// ---- Statement ----

Statement::Statement(Connection* connection, sqlite3_stmt* statement)
    : connection_(connection), statement_(statement) {}

Statement::Statement(Statement&& other) noexcept
    : connection_(other.connection_),
      statement_(std::exchange(other.statement_, nullptr)),
      bind_error_(other.bind_error_) {}

Statement& Statement::operator=(Statement&& other) noexcept {
  if (this != &other) {
    sqlite3_finalize(statement_);
    connection_ = other.connection_;
    statement_ = std::exchange(other.statement_, nullptr);
    bind_error_ = other.bind_error_;
  }
  return *this;
}

Statement::~Statement() { sqlite3_finalize(statement_); }

void Statement::bind(int index, std::int64_t value) {
  const int rc = sqlite3_bind_int64(statement_, index, value);
  if (bind_error_ == SQLITE_OK) bind_error_ = rc;
}

void Statement::bind(int index, double value) {
  const int rc = sqlite3_bind_double(statement_, index, value);
  if (bind_error_ == SQLITE_OK) bind_error_ = rc;
}

void Statement::bind(int index, std::string_view text) {
  const int rc = sqlite3_bind_text64(statement_, index, text.data(), text.size(), SQLITE_TRANSIENT,
                                     SQLITE_UTF8);
  if (bind_error_ == SQLITE_OK) bind_error_ = rc;
}

void Statement::bind(int index, std::optional<double> value) {
  if (value) {
    bind(index, *value);
  } else {
    bind_null(index);
  }
}

void Statement::bind_null(int index) {
  const int rc = sqlite3_bind_null(statement_, index);
  if (bind_error_ == SQLITE_OK) bind_error_ = rc;
}

void Statement::bind_pointer(int index, void* pointer, const char* type) {
  const int rc = sqlite3_bind_pointer(statement_, index, pointer, type, nullptr);
  if (bind_error_ == SQLITE_OK) bind_error_ = rc;
}

int Statement::step_code() {
  if (bind_error_ != SQLITE_OK) return bind_error_;
  int rc = SQLITE_OK;
  if (connection_->step_hook_) {
    // An injected busy code is a lock met at this step: wait as SQLite would, then ask again.
    while (const auto injected = connection_->step_hook_(sql())) {
      rc = *injected;
      if (!is_busy(rc) || !connection_->keep_waiting()) {
        connection_->end_wait(rc);
        return rc;
      }
    }
  }
  rc = sqlite3_step(statement_);
  if (connection_->wait_.active || is_busy(rc)) connection_->end_wait(rc);
  return rc;
}

Result<bool> Statement::step() {
  if (connection_->held_ != nullptr) {
    if (auto written = connection_->write_held(); !written) return std::unexpected(written.error());
  }
  const int rc = step_code();
  if (rc == SQLITE_ROW) return true;
  if (rc == SQLITE_DONE) return false;
  return std::unexpected(to_error(rc, connection_->db_,
                                  fmt::format("running \"{}\"", excerpt(sql())),
                                  is_busy(rc) && connection_->wait_cancelled_));
}

Result<void> Statement::run() {
  for (;;) {
    auto row = step();
    if (!row) return std::unexpected(row.error());
    if (!*row) return {};
  }
}

void Statement::reset() {
  sqlite3_reset(statement_);
  sqlite3_clear_bindings(statement_);
  bind_error_ = SQLITE_OK;
}

void Statement::rewind() {
  sqlite3_reset(statement_);
  bind_error_ = SQLITE_OK;
}

std::int64_t Statement::column_int64(int column) const {
  return sqlite3_column_int64(statement_, column);
}

double Statement::column_double(int column) const {
  return sqlite3_column_double(statement_, column);
}

std::optional<double> Statement::column_optional_double(int column) const {
  if (column_is_null(column)) return std::nullopt;
  return column_double(column);
}

std::string Statement::column_text(int column) const {
  const auto* text = reinterpret_cast<const char*>(sqlite3_column_text(statement_, column));
  if (text == nullptr) return {};
  return std::string(text, static_cast<std::size_t>(sqlite3_column_bytes(statement_, column)));
}

bool Statement::column_is_null(int column) const {
  return sqlite3_column_type(statement_, column) == SQLITE_NULL;
}

int Statement::column_count() const { return sqlite3_column_count(statement_); }

std::optional<std::string> Statement::column_as_text(int column) const {
  switch (sqlite3_column_type(statement_, column)) {
    case SQLITE_NULL:
      return std::nullopt;
    case SQLITE_INTEGER:
      return std::to_string(column_int64(column));
    case SQLITE_FLOAT:
      return fmt::format("{}", column_double(column));  // shortest round trip
    default:
      return column_text(column);
  }
}

std::string_view Statement::sql() const {
  const char* text = sqlite3_sql(statement_);
  return text == nullptr ? std::string_view{} : std::string_view{text};
}

// ---- Connection ----

Connection::Connection(sqlite3* db, std::filesystem::path path, Access access)
    : db_(db), path_(std::move(path)), access_(access) {}

Connection::~Connection() {
  cache_.clear();  // every statement is finalized before the connection closes
  sqlite3_close(db_);
}

Result<std::unique_ptr<Connection>> Connection::open(const std::filesystem::path& path,
                                                     Access access) {
  // NOMUTEX: one thread at a time (see the header), so SQLite's own locking is not needed.
  // EXRESCODE: extended result codes, so messages say e.g. "SQLITE_IOERR_FSYNC", not "I/O error".
  // SQLite's memory statistics take a global mutex on every allocation and free, and nothing
  // here reads them. The setting must come before SQLite initializes, so before the first open
  // (a C++ static's initializer runs once, other threads waiting for it).
  static const bool memory_statistics_off = [] {
    return sqlite3_config(SQLITE_CONFIG_MEMSTATUS, 0) == SQLITE_OK;
  }();
  (void)memory_statistics_off;  // SQLITE_MISUSE when SQLite was initialized already: harmless
  int flags = SQLITE_OPEN_NOMUTEX | SQLITE_OPEN_EXRESCODE;
  flags |= access == Access::read_only ? SQLITE_OPEN_READONLY
                                       : (SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
  sqlite3* db = nullptr;
  const int rc = sqlite3_open_v2(path.c_str(), &db, flags, nullptr);
  if (rc != SQLITE_OK) {
    Error error = to_error(rc, db, fmt::format("opening {}", path.string()));
    sqlite3_close(db);  // a handle is returned even on failure
    return std::unexpected(std::move(error));
  }
  return std::unique_ptr<Connection>(new Connection(db, path, access));
}

Result<Statement> Connection::prepare(std::string_view sql) {
  sqlite3_stmt* statement = nullptr;
  const int rc =
      sqlite3_prepare_v2(db_, sql.data(), static_cast<int>(sql.size()), &statement, nullptr);
  end_wait(rc);  // preparing reads the schema, which may meet a lock
  if (rc != SQLITE_OK) {
    sqlite3_finalize(statement);
    return std::unexpected(
        to_error(rc, db_, fmt::format("preparing \"{}\"", excerpt(sql)), wait_cancelled_));
  }
  return Statement(this, statement);
}

Result<CachedStatement> Connection::cached(std::string_view sql) {
  auto found = cache_.find(sql);
  if (found == cache_.end()) {
    auto statement = prepare(sql);
    if (!statement) return std::unexpected(statement.error());
    found =
        cache_.emplace(std::string(sql), std::make_unique<Statement>(std::move(*statement))).first;
  }
  return CachedStatement(found->second.get());
}

Result<void> Connection::write_held() {
  if (held_ == nullptr || writing_held_ || !held_->any()) return {};
  writing_held_ = true;
  auto written = held_->write();
  writing_held_ = false;
  return written;
}

Result<void> Connection::exec(std::string_view sql) {
  const char* next = sql.data();
  const char* const end = sql.data() + sql.size();
  while (next < end) {
    sqlite3_stmt* raw = nullptr;
    const char* tail = nullptr;
    const int rc = sqlite3_prepare_v2(db_, next, static_cast<int>(end - next), &raw, &tail);
    end_wait(rc);
    if (rc != SQLITE_OK) {
      sqlite3_finalize(raw);
      return std::unexpected(to_error(
          rc, db_,
          fmt::format("preparing \"{}\"", excerpt({next, static_cast<size_t>(end - next)})),
          wait_cancelled_));
    }
    next = tail;
    if (raw == nullptr) continue;  // only whitespace or a comment was left
    Statement statement(this, raw);
    if (auto done = statement.run(); !done) return done;
  }
  return {};
}

Result<std::int64_t> Connection::query_int64(std::string_view sql) {
  auto statement = prepare(sql);
  if (!statement) return std::unexpected(statement.error());
  auto row = statement->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return fail(ErrorKind::database, fmt::format("\"{}\" returned no row", sql));
  return statement->column_int64(0);
}

Result<std::string> Connection::query_text(std::string_view sql) {
  auto statement = prepare(sql);
  if (!statement) return std::unexpected(statement.error());
  auto row = statement->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return fail(ErrorKind::database, fmt::format("\"{}\" returned no row", sql));
  return statement->column_text(0);
}

std::int64_t Connection::changes() const { return sqlite3_changes64(db_); }

std::int64_t Connection::last_insert_rowid() const { return sqlite3_last_insert_rowid(db_); }

bool Connection::in_transaction() const { return sqlite3_get_autocommit(db_) == 0; }

// ---- Waiting for locks ----

namespace {

// Maximum pause between two looks at a lock, so that a cancellation is seen promptly.
constexpr std::int64_t kMaxPollMs = 50;

}  // namespace

int Connection::on_busy(void* connection, int /*calls: counted by keep_waiting itself*/) {
  return static_cast<Connection*>(connection)->keep_waiting() ? 1 : 0;
}

void Connection::set_lock_wait(LockWait wait) {
  wait.poll_ms = std::clamp<std::int64_t>(wait.poll_ms, 1, kMaxPollMs);
  lock_wait_ = std::move(wait);
  waits_for_locks_ = true;
  sqlite3_busy_handler(db_, on_busy, this);
}

bool Connection::keep_waiting() {
  if (!waits_for_locks_) return false;  // as SQLite without a busy handler: fail at once
  // One statement may meet several locks (SQLite counts its calls per lock): its wait is one.
  if (!wait_.active) {
    wait_ = Wait{.active = true, .started = std::chrono::steady_clock::now()};
  }
  if (lock_wait_.cancel && lock_wait_.cancel->load(std::memory_order_relaxed)) {
    wait_.cancelled = true;
    return false;
  }
  if (lock_wait_.give_up_after_ms && wait_.paused_ms >= *lock_wait_.give_up_after_ms) {
    return false;
  }
  if (!wait_.noticed && wait_.paused_ms >= lock_wait_.notice_after_ms) {
    wait_.noticed = true;
    if (lock_wait_.on_waiting) lock_wait_.on_waiting(wait_.paused_ms);
  }
  sqlite3_sleep(static_cast<int>(lock_wait_.poll_ms));
  wait_.paused_ms += lock_wait_.poll_ms;
  return true;
}

void Connection::end_wait(int code) {
  const Wait ended = std::exchange(wait_, Wait{});
  wait_cancelled_ = ended.active && ended.cancelled && is_busy(code);
  if (!ended.active || is_busy(code) || !ended.noticed || !lock_wait_.on_resumed) return;
  const auto waited = std::chrono::steady_clock::now() - ended.started;
  lock_wait_.on_resumed(std::chrono::duration_cast<std::chrono::milliseconds>(waited).count());
}

}  // namespace stagewell::sqlite
