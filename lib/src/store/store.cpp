// Opening a store (pragmas, migrations) and the reads that need no batch.
#include "stagewell/store.hpp"

#include <fmt/format.h>
#include <sqlite3.h>

#include <algorithm>
#include <system_error>

#include "store/migrations.hpp"
#include "store/store_impl.hpp"

namespace stagewell {
namespace {

using sqlite::Connection;

Result<std::unique_ptr<Connection>> connect(const std::filesystem::path& path,
                                            Connection::Access access,
                                            const StoreOptions& options) {
  auto connection = Connection::open(path, access);
  if (!connection) return connection;
  // Waits inside SQLite for a lock another connection holds before reporting SQLITE_BUSY.
  auto timeout =
      (*connection)->exec(fmt::format("PRAGMA busy_timeout = {}", options.busy_timeout_ms));
  if (!timeout) return std::unexpected(timeout.error());
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
  // Off by default in SQLite; the schema relies on its REFERENCES clauses.
  return connection.exec("PRAGMA foreign_keys = ON");
}

Result<std::int64_t> single_count(sqlite::CachedStatement statement) {
  auto row = statement->step();
  if (!row) return std::unexpected(row.error());
  return *row ? statement->column_int64(0) : 0;
}

}  // namespace

Store::Store(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
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
  auto connection = connect(path, Connection::Access::read_write_create, options);
  if (!connection) return std::unexpected(connection.error());
  if (auto ok = configure_writer(**connection); !ok) return std::unexpected(ok.error());
  if (auto ok = store_detail::migrate(**connection); !ok) return std::unexpected(ok.error());
  auto impl = std::make_unique<Impl>();
  impl->connection = std::move(*connection);
  impl->options = options;
  impl->schema_version = store_detail::latest_schema_version();
  return Store(std::move(impl));
}

Result<Store> Store::open_read_only(const std::filesystem::path& path,
                                    const StoreOptions& options) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) {
    return fail(ErrorKind::not_found, fmt::format("no database at {}", path.string()));
  }
  auto connection = connect(path, Connection::Access::read_only, options);
  if (!connection) return std::unexpected(connection.error());
  if (auto ok = store_detail::check_schema(**connection); !ok) return std::unexpected(ok.error());
  auto impl = std::make_unique<Impl>();
  impl->connection = std::move(*connection);
  impl->options = options;
  impl->schema_version = store_detail::latest_schema_version();
  return Store(std::move(impl));
}

int Store::schema_version() const { return impl_->schema_version; }

bool Store::read_only() const {
  return impl_->connection->access() == Connection::Access::read_only;
}

Result<SiteKey> Store::ensure_site(std::string_view id) {
  if (auto ok = impl_->require_writable("add a site"); !ok) return std::unexpected(ok.error());
  if (auto ok = impl_->require_no_batch("add a site"); !ok) return std::unexpected(ok.error());
  if (id.empty()) return fail(ErrorKind::invalid_argument, "a site id cannot be empty");
  auto& connection = *impl_->connection;
  {
    auto insert =
        connection.cached("INSERT INTO sites (id) VALUES (?1) ON CONFLICT (id) DO NOTHING");
    if (!insert) return std::unexpected(insert.error());
    (*insert)->bind(1, id);
    if (auto done = (*insert)->run(); !done) return std::unexpected(done.error());
  }
  auto select = connection.cached("SELECT site_key FROM sites WHERE id = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, id);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return fail(ErrorKind::database, fmt::format("site \"{}\" vanished after insert", id));
  return SiteKey{(*select)->column_int64(0)};
}

Result<std::optional<IngestProgress>> Store::committed_progress(std::string_view source) {
  auto select = impl_->connection->cached(
      "SELECT file_identity, byte_offset, updated_ms FROM ingest_progress WHERE source = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, source);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return std::optional<IngestProgress>{};
  return IngestProgress{(*select)->column_text(0), (*select)->column_int64(1),
                        (*select)->column_int64(2)};
}

Result<std::vector<StoredReading>> Store::recent_readings(SiteKey site,
                                                          std::int64_t at_or_before_ms,
                                                          std::size_t count) {
  // Newest first along the primary key, then reversed: the caller replays them in time order.
  auto select = impl_->connection->cached(
      "SELECT time_ms, stage, depth, discharge, flags, config_id FROM readings "
      "WHERE site_key = ?1 AND time_ms <= ?2 ORDER BY time_ms DESC LIMIT ?3");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, at_or_before_ms);
  (*select)->bind(3, static_cast<std::int64_t>(std::min<std::size_t>(count, INT64_MAX)));
  std::vector<StoredReading> readings;
  for (;;) {
    auto row = (*select)->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    const auto& s = **select;
    readings.push_back(StoredReading{
        .site = site,
        .time_ms = s.column_int64(0),
        .stage = s.column_double(1),
        .depth = s.column_double(2),
        .discharge = s.column_optional_double(3),
        .flags = Flags(static_cast<std::uint32_t>(s.column_int64(4))),
        .config = ConfigVersionId{s.column_int64(5)},
    });
  }
  std::reverse(readings.begin(), readings.end());
  return readings;
}

Result<std::int64_t> Store::count_readings() {
  auto select = impl_->connection->cached("SELECT count(*) FROM readings");
  if (!select) return std::unexpected(select.error());
  return single_count(std::move(*select));
}

Result<std::int64_t> Store::count_readings(SiteKey site) {
  auto select = impl_->connection->cached("SELECT count(*) FROM readings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  return single_count(std::move(*select));
}

Result<std::optional<double>> Store::stored_stage(SiteKey site, std::int64_t time_ms) {
  auto select =
      impl_->connection->cached("SELECT stage FROM readings WHERE site_key = ?1 AND time_ms = ?2");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  (*select)->bind(2, time_ms);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return std::optional<double>{};
  return std::optional<double>((*select)->column_double(0));
}

void Store::set_step_hook_for_testing(sqlite::StepHook hook) {
  impl_->connection->set_step_hook(std::move(hook));
}

sqlite::Connection& Store::connection() { return *impl_->connection; }

// ---- Store::Impl ----

Result<void> Store::Impl::run_retrying_busy(std::string_view sql) {
  auto statement = connection->cached(sql);
  if (!statement) return std::unexpected(statement.error());
  for (int attempt = 1;; ++attempt) {
    const int code = (*statement)->step_code();
    if (code == SQLITE_DONE) return {};
    if (!sqlite::is_busy(code) || attempt >= options.busy_attempts) {
      // Converted before the reset, which may replace the connection's message.
      return std::unexpected(sqlite::to_error(
          code, connection->handle(),
          fmt::format("running \"{}\" on {} (attempt {} of {})", sql, connection->path().string(),
                      attempt, options.busy_attempts)));
    }
    (*statement)->reset();
    sqlite3_sleep(options.busy_pause_ms);
  }
}

Result<void> Store::Impl::require_writable(std::string_view doing) const {
  if (connection->access() != Connection::Access::read_only) return {};
  return fail(ErrorKind::invalid_argument,
              fmt::format("cannot {}: {} is open read-only", doing, connection->path().string()));
}

Result<void> Store::Impl::require_no_batch(std::string_view doing) const {
  if (!batch_open) return {};
  return fail(ErrorKind::invalid_argument,
              fmt::format("cannot {} while a write batch is open; commit it first", doing));
}

}  // namespace stagewell
