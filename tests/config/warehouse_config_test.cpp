// The `warehouse:` key: absent means nothing ships; written, its connection string is checked by
// libpq's own parser (PQconninfoParse, the PostgreSQL client library) and may not hold a password;
// the schema and plant names are checked; the password file resolves against the configuration's
// folder; the plant defaults to the host name (gethostname(2), up to its first dot).
#include <doctest/doctest.h>
#include <unistd.h>

#include "config_test_support.hpp"

using stagewell::test::listing;

namespace {

stagewell::ConfigResult load(std::string_view tail) {
  return stagewell::test::parse_after_one_site(tail);
}

bool refused_at(std::string_view tail, int line, std::string_view fragment) {
  const auto config = load(tail);
  if (config) return false;
  INFO(listing(config.error()));
  return stagewell::test::has_error(config.error(), line, fragment);
}

}  // namespace

TEST_CASE("no warehouse key: nothing ships") {
  const auto config = load("");
  REQUIRE(config);
  CHECK_FALSE(config->warehouse.has_value());
}

TEST_CASE("a warehouse with every key, and with only its connection string") {
  auto config = load(
      "warehouse:\n"
      "  postgresql: \"host=db.example port=5433 dbname=flows user=writer\"\n"
      "  password_file: secrets/warehouse.pw\n"
      "  schema: water_records\n"
      "  plant: east-works\n");
  INFO((config ? std::string() : listing(config.error())));
  REQUIRE(config);
  REQUIRE(config->warehouse.has_value());
  CHECK(config->warehouse->postgresql == "host=db.example port=5433 dbname=flows user=writer");
  REQUIRE(config->warehouse->password_file.has_value());
  CHECK(*config->warehouse->password_file == "/srv/flows/secrets/warehouse.pw");
  CHECK(config->warehouse->schema == "water_records");
  CHECK(config->warehouse->plant == "east-works");

  config = load("warehouse:\n  postgresql: postgresql://writer@db.example/flows\n");
  INFO((config ? std::string() : listing(config.error())));
  REQUIRE(config);
  CHECK(config->warehouse->schema == "stagewell");
  CHECK_FALSE(config->warehouse->password_file.has_value());
  char host[256] = {};
  REQUIRE(gethostname(host, sizeof host - 1) == 0);
  const std::string expected = std::string(host).substr(0, std::string(host).find('.'));
  CHECK(config->warehouse->plant == expected);
}

TEST_CASE("a password in the connection string is refused, in either form") {
  CHECK(refused_at("warehouse:\n  postgresql: \"host=db dbname=flows password=hunter2\"\n", 9,
                   "password_file"));
  CHECK(refused_at("warehouse:\n  postgresql: postgresql://writer:hunter2@db/flows\n", 9,
                   "password_file"));
  // The refusal does not repeat the password it refuses, nor does a string that fails to parse.
  for (const char* tail : {"warehouse:\n  postgresql: \"password=hunter2 host=db\"\n",
                           "warehouse:\n  postgresql: postgresql://writer:hunter2@db/flows\n",
                           "warehouse:\n  postgresql: \"host=db password=hunter2 junk\"\n"}) {
    CAPTURE(tail);
    const auto config = load(tail);
    REQUIRE_FALSE(config);
    for (const auto& error : config.error()) {
      CHECK(error.to_string().find("hunter2") == std::string::npos);
    }
  }
}

TEST_CASE("a malformed connection string, schema or plant is refused with what is allowed") {
  CHECK(refused_at("warehouse:\n  postgresql: \"host=db nonsense\"\n", 9,
                   "not a PostgreSQL connection string"));
  CHECK(refused_at("warehouse:\n  postgresql: \"host=db colour=blue\"\n", 9,
                   "not a PostgreSQL connection string"));
  for (const char* schema : {"Water", "1st", "pg_catalog", "a-b", "x;drop"}) {
    CAPTURE(schema);
    CHECK(refused_at(std::string("warehouse:\n  postgresql: host=db\n  schema: ") + schema + "\n",
                     10, "schema name"));
  }
  CHECK(refused_at("warehouse:\n  postgresql: host=db\n  plant: east works\n", 10, "plant name"));
  CHECK(refused_at("warehouse:\n  plant: east\n", 9, "postgresql: required key is missing"));
}
