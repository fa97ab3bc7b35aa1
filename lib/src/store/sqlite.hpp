// A thin owner of SQLite's C handles, private to the store (tests that look at the file from
// outside use it as a second, independent connection). One RAII owner per handle: Connection owns
// the sqlite3*, Statement owns a sqlite3_stmt*. Every SQLite result code that is an error becomes a
// stagewell::Error (kind database, or cancelled for a wait stopped by LockWait::cancel) in exactly
// one function, to_error().
//
// Not thread-safe: a connection and its statements belong to one thread at a time. Connections on
// different threads share nothing.
#pragma once

#include <chrono>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>
#include <utility>

#include "stagewell/result.hpp"
#include "stagewell/store_options.hpp"

struct sqlite3;
struct sqlite3_stmt;

namespace stagewell::sqlite {

class Connection;

// The one conversion of a SQLite result code to an Error (kind database; cancelled when
// `cancelled`, a wait for a lock stopped by LockWait::cancel). `doing` says what was being
// attempted ("opening /var/x.db"). Uses the connection's message when it belongs to `code`,
// otherwise SQLite's generic text for the code (an injected fault has no message of its own).
Error to_error(int code, sqlite3* db, std::string_view doing, bool cancelled = false);

// True for SQLITE_BUSY and its extended codes: another connection holds a lock we need.
bool is_busy(int code);

// A prepared statement. Binding errors are kept and reported by the next step(), so that a
// sequence of bind() calls needs no checks of its own. Parameter indexes start at 1, column
// indexes at 0 (as in SQLite).
// REQUIRES: does not outlive the Connection that prepared it.
// Writes that a connection's owner holds back to do several in one statement (the store's
// readings known to be new). They are done before any other statement of the connection steps,
// so every statement sees the database as if they had been done at once.
class HeldWrites {
 public:
  virtual bool any() const = 0;
  virtual Result<void> write() = 0;

 protected:
  ~HeldWrites() = default;
};

class Statement {
 public:
  Statement(Statement&& other) noexcept;
  Statement& operator=(Statement&& other) noexcept;
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;
  ~Statement();  // finalizes

  void bind(int index, std::int64_t value);
  void bind(int index, double value);
  void bind(int index, std::string_view text);        // copied by SQLite (SQLITE_TRANSIENT)
  void bind(int index, std::optional<double> value);  // NULL when empty
  void bind_null(int index);
  // A pointer for an application-defined function of this program (SQLite's pointer-passing
  // interface: SQL sees NULL, and only sqlite3_value_pointer with the same `type` gets it back).
  // REQUIRES: `type` is a string constant; `pointer` outlives the statement's next run.
  void bind_pointer(int index, void* pointer, const char* type);

  // Runs one step: true when a row is ready, false when the statement is done.
  Result<bool> step();
  // Runs one step and returns SQLite's raw result code (SQLITE_ROW, SQLITE_DONE or an error), for
  // a caller that must react to a particular code. Bind errors come back as their code.
  int step_code();
  // Steps until done, ignoring rows (DDL, pragmas, INSERT/UPDATE).
  Result<void> run();
  // Ready to run again: resets and clears the bindings.
  void reset();
  // Ready to run again with the same bindings (for a caller that binds every parameter anyway).
  void rewind();

  std::int64_t column_int64(int column) const;
  double column_double(int column) const;
  std::optional<double> column_optional_double(int column) const;  // empty when NULL
  std::string column_text(int column) const;
  bool column_is_null(int column) const;
  int column_count() const;
  // The column as text, whatever its type: an integer in decimal, a REAL as the shortest text that
  // reads back as the same double, text and blobs as stored; empty when NULL.
  std::optional<std::string> column_as_text(int column) const;

  std::string_view sql() const;

 private:
  friend class Connection;
  Statement(Connection* connection, sqlite3_stmt* statement);

  Connection* connection_ = nullptr;
  sqlite3_stmt* statement_ = nullptr;
  int bind_error_ = 0;  // SQLITE_OK, or the first failed bind's code
};

// A cached statement on loan: reset (with bindings cleared) when the loan ends, so that no cached
// statement keeps a read transaction open after its caller is done with it.
class CachedStatement {
 public:
  // Bindings to keep: `keep` only rewinds the statement when the loan ends (Statement::rewind),
  // for a per-reading statement whose caller binds every parameter each time.
  enum class Bindings { clear, keep };

  explicit CachedStatement(Statement* statement, Bindings bindings = Bindings::clear)
      : statement_(statement), bindings_(bindings) {}
  CachedStatement(CachedStatement&& other) noexcept
      : statement_(std::exchange(other.statement_, nullptr)), bindings_(other.bindings_) {}
  CachedStatement(const CachedStatement&) = delete;
  CachedStatement& operator=(const CachedStatement&) = delete;
  CachedStatement& operator=(CachedStatement&&) = delete;
  ~CachedStatement() {
    if (statement_ == nullptr) return;
    if (bindings_ == Bindings::keep) {
      statement_->rewind();
    } else {
      statement_->reset();
    }
  }
  Statement* operator->() const { return statement_; }
  Statement& operator*() const { return *statement_; }

 private:
  Statement* statement_;
  Bindings bindings_;
};

class Connection {
 public:
  enum class Access { read_write_create, read_only };

  // Opens (read-write: creating) the database file. The caller checks that the directory exists.
  static Result<std::unique_ptr<Connection>> open(const std::filesystem::path& path, Access access);

  Connection(const Connection&) = delete;
  Connection& operator=(const Connection&) = delete;
  ~Connection();  // finalizes the cached statements, then closes

  Result<Statement> prepare(std::string_view sql);
  // The statement for `sql`, prepared on first use and reused afterwards (the hot path).
  Result<CachedStatement> cached(std::string_view sql);
  // Runs one or more ';'-separated statements, discarding any rows (migrations, pragmas). Each
  // statement is stepped through Statement, so the step hook sees it.
  Result<void> exec(std::string_view sql);
  // The first column of the first row of `sql` (e.g. "PRAGMA user_version").
  Result<std::int64_t> query_int64(std::string_view sql);
  Result<std::string> query_text(std::string_view sql);

  std::int64_t changes() const;  // rows changed by the last INSERT/UPDATE/DELETE
  std::int64_t last_insert_rowid() const;
  bool in_transaction() const;  // false in autocommit mode
  Access access() const { return access_; }
  const std::filesystem::path& path() const { return path_; }
  sqlite3* handle() const { return db_; }

  void set_step_hook(StepHook hook) { step_hook_ = std::move(hook); }
  // `held` (or nothing) is written before any statement of this connection steps, except those
  // `held.write()` itself runs. Not owned.
  void set_held_writes(HeldWrites* held) { held_ = held; }
  // Writes what is held now, if anything (the statements it runs do not write it again).
  Result<void> write_held();
  // Installs SQLite's busy handler: from now on every statement that meets a lock another
  // connection holds waits as `wait` says. Without it a busy lock fails the statement at once.
  void set_lock_wait(LockWait wait);

 private:
  friend class Statement;
  Connection(sqlite3* db, std::filesystem::path path, Access access);

  // SQLite's busy handler: calls keep_waiting().
  static int on_busy(void* connection, int calls);
  // While a lock is busy: true after a pause, to look again; false to give up (the statement
  // then fails with SQLITE_BUSY).
  bool keep_waiting();
  // After a step or prepare that returned `code`: ends the wait in progress, if any, reporting a
  // noticed one that ended in success, and sets wait_cancelled_.
  void end_wait(int code);

  sqlite3* db_ = nullptr;
  std::filesystem::path path_;
  Access access_;
  StepHook step_hook_;
  HeldWrites* held_ = nullptr;
  bool writing_held_ = false;
  LockWait lock_wait_;
  bool waits_for_locks_ = false;  // set_lock_wait() was called
  // The wait of the statement running now (one at a time: see the top of the file).
  struct Wait {
    bool active = false;
    bool noticed = false;
    bool cancelled = false;
    std::int64_t paused_ms = 0;  // sum of the pauses so far
    std::chrono::steady_clock::time_point started;
  } wait_;
  bool wait_cancelled_ = false;  // the last step or prepare failed busy after a cancelled wait
  // Looked up by string_view without building a std::string: cached() is on the per-reading path.
  struct SqlHash {
    using is_transparent = void;
    std::size_t operator()(std::string_view sql) const {
      return std::hash<std::string_view>{}(sql);
    }
  };
  std::unordered_map<std::string, std::unique_ptr<Statement>, SqlHash, std::equal_to<>> cache_;
};

}  // namespace stagewell::sqlite
