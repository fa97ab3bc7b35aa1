// Opening a database: the schema from empty, re-opening, refusing what the program cannot use.
#include "store/migrations.hpp"

#include <doctest/doctest.h>

#include <cstring>
#include <regex>
#include <vector>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::query_int;
using test::query_text;
using test::raw_connection;
using test::TempDir;

// The highest NNN of schema/NNN_name.sql in the source tree: what user_version must reach.
int highest_migration_number() {
  const std::regex pattern(R"((\d{3})_[a-z0-9_]+\.sql)");
  int highest = 0;
  for (const auto& entry : std::filesystem::directory_iterator(STAGEWELL_SOURCE_DIR "/schema")) {
    std::smatch match;
    const std::string name = entry.path().filename().string();
    if (std::regex_match(name, match, pattern)) highest = std::max(highest, std::stoi(match[1]));
  }
  return highest;
}

TEST_CASE("a new database gets every migration, its tables and views") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const int expected = highest_migration_number();
  REQUIRE(expected >= 1);
  CHECK(store.schema_version() == expected);

  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "PRAGMA user_version") == expected);
  CHECK(query_text(*raw, "PRAGMA journal_mode") == "wal");
  for (const char* table : {"sites", "config_versions", "readings", "rejected_lines",
                            "ingest_progress", "flag_names"}) {
    CAPTURE(table);
    CHECK(query_int(*raw, std::string("SELECT count(*) FROM sqlite_schema WHERE type = 'table' "
                                      "AND name = '") +
                              table + "'") == 1);
  }
  for (const char* view : {"discharge", "rejects"}) {
    CAPTURE(view);
    CHECK(query_int(*raw, std::string("SELECT count(*) FROM sqlite_schema WHERE type = 'view' "
                                      "AND name = '") +
                              view + "'") == 1);
  }
  // WITHOUT ROWID tables have no rowid to select.
  CHECK_FALSE(raw->prepare("SELECT rowid FROM readings").has_value());
  CHECK_FALSE(raw->prepare("SELECT rowid FROM ingest_progress").has_value());
  CHECK(raw->prepare("SELECT rowid FROM rejected_lines").has_value());
}

TEST_CASE("re-opening changes nothing and keeps the data") {
  TempDir dir;
  std::int64_t objects = 0;
  {
    Store store = test::open_store(dir.db());
    const auto site = test::add_site(store, "raceway-a");
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
    REQUIRE(batch->commit().has_value());
    auto raw = raw_connection(dir.db());
    objects = query_int(*raw, "SELECT count(*) FROM sqlite_schema");
  }
  Store again = test::open_store(dir.db());
  CHECK(again.schema_version() == highest_migration_number());
  CHECK(again.readings().count() == 1);
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "SELECT count(*) FROM sqlite_schema") == objects);
  CHECK(query_int(*raw, "SELECT count(*) FROM flag_names") == 11);  // seeded once, not twice
  // The same id still names the same site.
  CHECK(again.sites().ensure("raceway-a")->value == query_int(*raw, "SELECT site_key FROM sites"));
}

TEST_CASE("a database newer than the program is refused") {
  TempDir dir;
  { test::open_store(dir.db()); }
  {
    auto raw = raw_connection(dir.db());
    REQUIRE(raw->exec("PRAGMA user_version = 999").has_value());
  }
  auto store = Store::open(dir.db());
  REQUIRE_FALSE(store.has_value());
  CHECK(store.error().kind == ErrorKind::database);
  CHECK(store.error().message.find("newer") != std::string::npos);
  CHECK(store.error().message.find("999") != std::string::npos);
  auto reader = Store::open_read_only(dir.db());
  REQUIRE_FALSE(reader.has_value());
  CHECK(reader.error().message.find("newer") != std::string::npos);
  // Refusing did not touch it.
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "PRAGMA user_version") == 999);
}

TEST_CASE("another application's database is refused and left alone") {
  TempDir dir;
  {
    auto raw = raw_connection(dir.db());
    REQUIRE(raw->exec("CREATE TABLE invoices (number INTEGER)").has_value());
  }
  auto store = Store::open(dir.db());
  REQUIRE_FALSE(store.has_value());
  CHECK(store.error().kind == ErrorKind::database);
  CHECK(store.error().message.find("not a stagewell database") != std::string::npos);
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "SELECT count(*) FROM sqlite_schema WHERE name = 'sites'") == 0);
}

TEST_CASE("a migration that fails is rolled back whole, with its user_version") {
  TempDir dir;
  {
    // A stagewell file (by its application_id) at version 0 in which a table of migration 1
    // already exists: the migration fails part-way, at that CREATE TABLE.
    auto raw = raw_connection(dir.db());
    REQUIRE(
        raw->exec("PRAGMA application_id = 1398032215; CREATE TABLE flag_names (x)").has_value());
  }
  auto store = Store::open(dir.db());
  REQUIRE_FALSE(store.has_value());
  CHECK(store.error().message.find("001_initial") != std::string::npos);
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "PRAGMA user_version") == 0);
  // Tables created earlier in the same migration were rolled back with it.
  CHECK(query_int(*raw, "SELECT count(*) FROM sqlite_schema WHERE name = 'sites'") == 0);
}

TEST_CASE("the store does not create directories") {
  TempDir dir;
  const auto missing = dir.path() / "no-such-directory";
  auto store = Store::open(missing / "stagewell.db");
  REQUIRE_FALSE(store.has_value());
  CHECK(store.error().kind == ErrorKind::not_found);
  CHECK(store.error().message.find("does not exist") != std::string::npos);
  CHECK(store.error().message.find(missing.string()) != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(missing));
}

TEST_CASE("read-only opening needs an existing database at the current version") {
  TempDir dir;
  auto missing = Store::open_read_only(dir.db());
  REQUIRE_FALSE(missing.has_value());
  CHECK(missing.error().kind == ErrorKind::not_found);
  CHECK_FALSE(std::filesystem::exists(dir.db()));  // and it was not created

  { raw_connection(dir.db()); }  // an empty file: version 0
  auto old = Store::open_read_only(dir.db());
  REQUIRE_FALSE(old.has_value());
  CHECK(old.error().message.find("older") != std::string::npos);

  { test::open_store(dir.db()); }
  auto reader = Store::open_read_only(dir.db());
  REQUIRE_MESSAGE(reader.has_value(), reader.error().message);
  CHECK(reader->read_only());
  CHECK(reader->schema_version() == highest_migration_number());
}

// Migration 6 stops storing each reading's depth; the `discharge` view computes it from the
// version's terms. Readings stored at schema 5 must come out of the view with the depth they had,
// bit for bit. The versions' JSON text is in the form the program writes (site_json.cpp): unit
// system, stage units, offset and zero flow, and a stage correction with a drift.
TEST_CASE("migration 6 keeps every stored depth, bit for bit, computed from the version") {
  TempDir dir;
  struct Old {
    std::int64_t time_ms;
    double stage, depth;
  };
  std::vector<Old> old;
  {
    auto raw = raw_connection(dir.db());
    for (const auto& migration : store_detail::migrations()) {
      if (migration.version > 5) break;
      REQUIRE(raw->exec(migration.sql).has_value());
      REQUIRE(raw->exec("PRAGMA user_version = " + std::to_string(migration.version)).has_value());
    }
    REQUIRE(raw->exec("INSERT INTO sites (site_key, id) VALUES (1, 'raceway-a')").has_value());
    // Version 1: US units, stage in inches with an offset and zero flow; version 2: the same
    // with a drifting correction over the hour [0, 3,600,000) ms.
    REQUIRE(raw->exec(R"(INSERT INTO config_versions (config_id, site_key, config_json, hash,
        created_ms) VALUES
        (1, 1, '{"units":"us","stage":{"units":"in","offset":1.3,"zero_flow":2.7}}', 'a', 0),
        (2, 1, '{"correction":{"drift":0.37,"from_ms":0,"offset":-0.11,"to_ms":3600000},
                 "units":"us","stage":{"units":"in","offset":1.3,"zero_flow":2.7}}', 'b', 0))")
                .has_value());
    auto insert = raw->prepare(
        "INSERT INTO readings (site_key, time_ms, stage, depth, discharge, flags, config_id) "
        "VALUES (1, ?1, ?2, ?3, 1.0, 0, ?4)");
    REQUIRE(insert.has_value());
    for (int i = 0; i < 200; ++i) {
      const std::int64_t time_ms = 17'000 * i + 13;
      const double stage = 0.1 * i + 1.0 / 3.0;
      const bool corrected = i % 2 == 1;
      // SiteHistory::depth: (stage + correction) + offset - zero_flow, in inches, to feet.
      const double correction =
          corrected ? -0.11 + 0.37 * (static_cast<double>(time_ms - 0) / 3'600'000.0) : 0.0;
      const double depth = ((stage + correction) + 1.3 - 2.7) * 0.0254 / 0.3048;
      insert->bind(1, time_ms);
      insert->bind(2, stage);
      insert->bind(3, depth);
      insert->bind(4, static_cast<std::int64_t>(corrected ? 2 : 1));
      REQUIRE(insert->run().has_value());
      insert->reset();
      old.push_back({time_ms, stage, depth});
    }
  }
  Store store = test::open_store(dir.db());  // migrates
  CHECK(store.schema_version() == highest_migration_number());
  auto raw = raw_connection(dir.db());
  CHECK_FALSE(raw->prepare("SELECT depth FROM readings").has_value());  // no longer stored
  auto select = raw->prepare("SELECT stage, depth FROM discharge ORDER BY unix_time");
  REQUIRE(select.has_value());
  std::size_t i = 0;
  for (; select->step().value_or(false); ++i) {
    REQUIRE(i < old.size());
    CAPTURE(i);
    CHECK(select->column_double(0) == old[i].stage);
    const double depth = select->column_double(1);
    CHECK(std::memcmp(&depth, &old[i].depth, sizeof depth) == 0);
  }
  CHECK(i == old.size());
  // The readings' own reads give the same depths.
  std::vector<StoredReading> stored;
  REQUIRE(store.readings().range(SiteKey{1}, 0, INT64_MAX, 1000, stored).has_value());
  REQUIRE(stored.size() == old.size());
  for (std::size_t k = 0; k < old.size(); ++k) CHECK(stored[k].depth == old[k].depth);
}

}  // namespace
}  // namespace stagewell
