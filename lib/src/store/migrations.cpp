#include "store/migrations.hpp"

#include <fmt/format.h>

#include "store/depth_terms.hpp"

namespace stagewell::store_detail {
namespace {

// PRAGMA application_id of a stagewell database: "STGW" in ASCII (0x53544757). Set by
// schema/001_initial.sql.
constexpr std::int64_t kApplicationId = 0x53544757;

struct SchemaState {
  std::int64_t application_id = 0;
  std::int64_t user_version = 0;
  std::int64_t objects = 0;  // tables, indexes, views... of any application
};

Result<SchemaState> read_state(sqlite::Connection& connection) {
  auto application_id = connection.query_int64("PRAGMA application_id");
  if (!application_id) return std::unexpected(application_id.error());
  auto user_version = connection.query_int64("PRAGMA user_version");
  if (!user_version) return std::unexpected(user_version.error());
  auto objects = connection.query_int64("SELECT count(*) FROM sqlite_schema");
  if (!objects) return std::unexpected(objects.error());
  return SchemaState{*application_id, *user_version, *objects};
}

// A stagewell database, or an empty file that can become one.
Result<void> check_identity(const SchemaState& state, const std::filesystem::path& path) {
  const bool empty = state.objects == 0 && state.user_version == 0;
  if (state.application_id == kApplicationId || (empty && state.application_id == 0)) return {};
  return fail(ErrorKind::database,
              fmt::format("{} is not a stagewell database (it belongs to another application: "
                          "application_id {}, user_version {}); give stagewell a file of its own",
                          path.string(), state.application_id, state.user_version));
}

Result<void> refuse_newer(const SchemaState& state, const std::filesystem::path& path) {
  if (state.user_version <= latest_schema_version()) return {};
  return fail(ErrorKind::database,
              fmt::format("{} has schema version {}, newer than this program understands ({}): "
                          "it was written by a newer stagewell; run that version or a later one",
                          path.string(), state.user_version, latest_schema_version()));
}

// What a migration needs done in C++ after its script, in the same transaction.
Result<void> after_script(sqlite::Connection& connection, int version) {
  // 6 moved each reading's depth into its version's terms: the versions recorded before it get
  // theirs from their JSON text (SQLite's own number parsing is not guaranteed to round as
  // strtod does; the terms must be the doubles the program had).
  if (version == 6) return fill_depth_terms(connection);
  return {};
}

// One migration and its user_version in one transaction: either both are applied or neither.
Result<void> apply(sqlite::Connection& connection, const Migration& migration) {
  auto failed = [&](const Error& error) {
    (void)connection.exec("ROLLBACK");  // the error being returned matters more than this one
    return fail(ErrorKind::database,
                fmt::format("applying schema migration {} to {}: {}", migration.name,
                            connection.path().string(), error.message));
  };
  if (auto begun = connection.exec("BEGIN IMMEDIATE"); !begun) return failed(begun.error());
  // Another process may have applied it while this one waited for the write lock.
  auto version = connection.query_int64("PRAGMA user_version");
  if (!version) return failed(version.error());
  if (*version < migration.version) {
    if (auto done = connection.exec(migration.sql); !done) return failed(done.error());
    if (auto done = after_script(connection, migration.version); !done) {
      return failed(done.error());
    }
    // A pragma takes no parameters; the number is an int from the generated table.
    auto set = connection.exec(fmt::format("PRAGMA user_version = {}", migration.version));
    if (!set) return failed(set.error());
  }
  if (auto committed = connection.exec("COMMIT"); !committed) return failed(committed.error());
  return {};
}

}  // namespace

int latest_schema_version() { return migrations().back().version; }

Result<void> migrate(sqlite::Connection& connection) {
  auto state = read_state(connection);
  if (!state) return std::unexpected(state.error());
  if (auto ok = check_identity(*state, connection.path()); !ok) return ok;
  if (auto ok = refuse_newer(*state, connection.path()); !ok) return ok;
  for (const Migration& migration : migrations()) {
    if (migration.version <= state->user_version) continue;
    if (auto applied = apply(connection, migration); !applied) return applied;
  }
  return {};
}

Result<void> check_schema(sqlite::Connection& connection) {
  auto state = read_state(connection);
  if (!state) return std::unexpected(state.error());
  if (auto ok = check_identity(*state, connection.path()); !ok) return ok;
  if (auto ok = refuse_newer(*state, connection.path()); !ok) return ok;
  if (state->user_version < latest_schema_version()) {
    return fail(
        ErrorKind::database,
        fmt::format("{} has schema version {}, older than this program's {}: open it once "
                    "read-write (start the service) to migrate it",
                    connection.path().string(), state->user_version, latest_schema_version()));
  }
  return {};
}

}  // namespace stagewell::store_detail
