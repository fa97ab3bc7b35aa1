// Opening a database: the schema from empty, re-opening, refusing what the program cannot use.
#include <doctest/doctest.h>

#include <regex>

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

}  // namespace
}  // namespace stagewell
