// Opening a store (pragmas, lock waits, migrations), its tables, and whether stored readings
// changed.
#include "stagewell/store.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <fstream>
#include <optional>
#include <string>
#include <system_error>

#include "store/day_readings_scan.hpp"
#include "store/migrations.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

using sqlite::Connection;
using store_detail::Core;

Result<std::unique_ptr<Connection>> connect(const std::filesystem::path& path,
                                            Connection::Access access,
                                            const StoreOptions& options) {
  auto connection = Connection::open(path, access);
  if (!connection) return connection;
  // Every statement waits for a lock another connection holds as the options say.
  (*connection)->set_lock_wait(options.lock_wait);
  if (auto added = store_detail::add_day_readings_function(**connection); !added) {
    return std::unexpected(added.error());
  }
  return connection;
}

// Settings of the writer's connection.
Result<void> configure_writer(Connection& connection) {
  // WAL: readers (an analyst's sqlite3 shell, the page) never block the writer and never see a
  // half-written batch. The mode is stored in the file, so readers use it too.
  auto mode = connection.query_text("PRAGMA journal_mode = WAL");
  if (!mode) return std::unexpected(mode.error());
  if (*mode != "wal") {
    return fail(ErrorKind::database,
                fmt::format("{} cannot use write-ahead logging (journal mode stayed \"{}\"); WAL "
                            "needs a local file system that supports shared memory",
                            connection.path().string(), *mode));
  }
  // synchronous=NORMAL: in WAL mode a commit is not synced to disk; the WAL is synced at each
  // checkpoint. A power loss (not a crash of the process: that loses nothing) can therefore lose
  // the most recent transactions, but never corrupts the database. That is safe here because
  // ingest progress is committed in the same transaction as the readings it covers: a lost
  // transaction loses its progress too, and those lines are simply read again from the source.
  // Nothing is lost or stored twice, and each commit avoids an fsync.
  if (auto done = connection.exec("PRAGMA synchronous = NORMAL"); !done) return done;
  // Statement journals (an INSERT of several rows that may stop half-way) and sorts in memory,
  // not in temporary files.
  if (auto done = connection.exec("PRAGMA temp_store = MEMORY"); !done) return done;
  // Off by default in SQLite; the small tables rely on their REFERENCES clauses (the readings
  // table has none: its keys only ever come from the store itself).
  return connection.exec("PRAGMA foreign_keys = ON");
}

std::unique_ptr<Core> make_core(std::unique_ptr<Connection> connection,
                                const StoreOptions& options) {
  auto core = std::make_unique<Core>();
  core->connection = std::move(connection);
  core->connection->set_held_writes(core.get());
  core->options = options;
  core->schema_version = store_detail::latest_schema_version();
  return core;
}

// SQLite says only "unable to open database file" (or "attempt to write a readonly database")
// when the file or its directory cannot be written: the service needs to create the database and,
// beside it, its -wal and -shm files. Says which, and why (access(2): EACCES, EROFS...); `error`
// unchanged when both can be written or the failure is of another kind.
Error explain_unwritable(const std::filesystem::path& path, const std::filesystem::path& directory,
                         Error error) {
  if (error.kind != ErrorKind::database) return error;
  const auto unwritable = [](const std::filesystem::path& p) -> std::optional<std::string> {
    if (::access(p.c_str(), W_OK) == 0) return std::nullopt;
    return std::string(std::strerror(errno));
  };
  std::error_code ec;
  const bool exists = std::filesystem::exists(path, ec);
  if (exists) {
    if (const auto why = unwritable(path)) {
      return Error{ErrorKind::io,
                   fmt::format("cannot write the database {}: {}; the service's user needs to "
                               "write it ({})",
                               path.string(), *why, error.message)};
    }
  }
  if (const auto why = unwritable(directory)) {
    return Error{ErrorKind::io,
                 fmt::format("cannot {} the database {}: the directory {} is not writable ({}); "
                             "the service's user must be able to create files there: the "
                             "database and, beside it, its -wal and -shm files ({})",
                             exists ? "write" : "create", path.string(), directory.string(), *why,
                             error.message)};
  }
  return error;
}

// The process's umask, read without changing it (Linux: /proc/self/status, "Umask:"); 022 when
// it cannot be read.
unsigned current_umask() {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line)) {
    if (line.rfind("Umask:", 0) == 0) {
      return static_cast<unsigned>(std::stoul(line.substr(6), nullptr, 8));
    }
  }
  return 022;
}

}  // namespace

Store::Store(std::unique_ptr<Core> core) : core_(std::move(core)) {}
Store::Store(Store&&) noexcept = default;
Store& Store::operator=(Store&&) noexcept = default;
Store::~Store() = default;

Result<Store> Store::open(const std::filesystem::path& path, const StoreOptions& options) {
  const std::filesystem::path directory =
      path.has_parent_path() ? path.parent_path() : std::filesystem::path(".");
  std::error_code ec;
  if (!std::filesystem::is_directory(directory, ec)) {
    return fail(ErrorKind::not_found,
                fmt::format("cannot open the database {}: the directory {} does not exist "
                            "(create it first; the store creates no directories)",
                            path.string(), directory.string()));
  }
  const bool created = !std::filesystem::exists(path, ec);
  auto connection = connect(path, Connection::Access::read_write_create, options);
  if (!connection) return std::unexpected(explain_unwritable(path, directory, connection.error()));
  // SQLite creates a database with mode 0644 less the umask, so under the service's UMask=0007
  // its group could read the file but not write the -shm file a WAL reader needs. A new file is
  // made 0666 less the umask instead (0660 for the service), before the -wal and -shm files
  // exist: SQLite gives those the database file's mode.
  if (created) {
    std::filesystem::permissions(path, std::filesystem::perms(0666 & ~current_umask()),
                                 std::filesystem::perm_options::replace, ec);
  }
  if (auto ok = configure_writer(**connection); !ok) {
    return std::unexpected(explain_unwritable(path, directory, ok.error()));
  }
  if (auto ok = store_detail::migrate(**connection); !ok) {
    return std::unexpected(explain_unwritable(path, directory, ok.error()));
  }
  return Store(make_core(std::move(*connection), options));
}

Result<Store> Store::open_read_only(const std::filesystem::path& path,
                                    const StoreOptions& options) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) {
    return fail(ErrorKind::not_found, fmt::format("no database at {}", path.string()));
  }
  auto connection = connect(path, Connection::Access::read_only, options);
  if (!connection) return std::unexpected(connection.error());
  // Readers scan long ranges (a report reads a year of readings when its figures are stale): with
  // the file mapped (its first GiB), SQLite reads pages in place instead of copying each one out
  // of the kernel. It maps only the database file and still reads what the WAL holds from the
  // WAL, so what a writer beside it commits is seen as before.
  if (auto done = (*connection)->exec("PRAGMA mmap_size = 1073741824"); !done) {
    return std::unexpected(done.error());
  }
  if (auto ok = store_detail::check_schema(**connection); !ok) return std::unexpected(ok.error());
  return Store(make_core(std::move(*connection), options));
}

Result<std::vector<std::string>> Store::check_integrity(const std::filesystem::path& path) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) {
    return fail(ErrorKind::not_found, fmt::format("no database at {}", path.string()));
  }
  auto connection = Connection::open(path, Connection::Access::read_only);
  if (!connection) return std::unexpected(connection.error());
  auto check = (*connection)->prepare("PRAGMA integrity_check");
  if (!check) return std::unexpected(check.error());
  std::vector<std::string> problems;
  auto read = store_detail::each_row(*check, [&](const auto& s) {
    std::string line = s.column_text(0);
    if (line != "ok") problems.push_back(std::move(line));
  });
  if (!read) return std::unexpected(read.error());
  return problems;
}

int Store::schema_version() const { return core_->schema_version; }

bool Store::read_only() const {
  return core_->connection->access() == Connection::Access::read_only;
}

SitesTable Store::sites() { return SitesTable(core_.get()); }
VersionsTable Store::versions() { return VersionsTable(core_.get()); }
ReadingsTable Store::readings() { return ReadingsTable(core_.get()); }
ProgressTable Store::progress() { return ProgressTable(core_.get()); }
DailyTable Store::daily() { return DailyTable(core_.get()); }
AlarmTable Store::alarms() { return AlarmTable(core_.get()); }
RecomputationRunsTable Store::recomputation_runs() { return RecomputationRunsTable(core_.get()); }
GaugingsTable Store::gaugings() { return GaugingsTable(core_.get()); }
ShippingQueue Store::shipping() { return ShippingQueue(core_.get()); }

Result<bool> Store::stored_readings_changed(ReadingsMark& seen) {
  // data_version changes when another connection commits; this store's own commits, the rewrites
  // included, leave it alone: those are counted here.
  auto version = core_->db().cached("PRAGMA data_version");
  if (!version) return std::unexpected(version.error());
  auto row = (*version)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return fail(ErrorKind::database, "PRAGMA data_version returned no row");
  const ReadingsMark now{(*version)->column_int64(0), core_->readings_rewrites};
  const bool changed = !(now == seen);
  seen = now;
  return changed;
}

void Store::set_step_hook_for_testing(StepHook hook) {
  core_->connection->set_step_hook(std::move(hook));
}

// ---- store_detail::Core ----

namespace store_detail {

Result<void> Core::require_writable(std::string_view doing) const {
  if (connection->access() != Connection::Access::read_only) return {};
  return fail(ErrorKind::invalid_argument,
              fmt::format("cannot {}: {} is open read-only", doing, connection->path().string()));
}

Result<void> Core::require_no_batch(std::string_view doing) const {
  if (!batch_open) return {};
  return fail(ErrorKind::invalid_argument,
              fmt::format("cannot {} while a write batch is open; commit it first", doing));
}

}  // namespace store_detail
}  // namespace stagewell
