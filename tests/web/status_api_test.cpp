// The StatusApi without sockets: routes, methods, odd targets and ranges answered with the right
// status (RFC 9110 section 15), JSON bodies that carry the stored numbers, and the OpenMetrics
// text ending with `# EOF` (OpenMetrics 1.0, "Overall structure").
#include "stagewell/status_api.hpp"

#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include "../store/store_test_support.hpp"
#include "stagewell/config.hpp"

namespace {

using nlohmann::json;
using stagewell::HttpAnswer;
using stagewell::StatusApi;

// 2026-05-01T12:00:00Z in ms since the epoch (date -u -d 2026-05-01T12:00:00Z +%s, times 1000).
constexpr std::int64_t kNoon = 1'777'636'800'000;

struct Fixture {
  stagewell::test::TempDir dir;
  std::unique_ptr<StatusApi> api;

  Fixture() {
    {
      auto store = stagewell::test::open_store(dir.db());
      const auto site = stagewell::test::add_site(store, "weir");
      auto batch = store.begin();
      REQUIRE(batch);
      for (int i = 0; i < 3; ++i) {
        stagewell::StoredReading reading;
        reading.site = site.key;
        reading.time_ms = kNoon - (2 - i) * 60'000;
        reading.stage = 0.25 + 0.01 * i;
        reading.depth = reading.stage;
        reading.discharge = 0.5 + i;
        reading.flags = i == 2 ? stagewell::Flags(stagewell::Flag::spike) : stagewell::Flags();
        reading.config = site.config;
        REQUIRE(batch->insert(reading));
      }
      REQUIRE(batch->commit());
    }
    const std::string yaml = "units: metric\ndatabase: " + dir.db().string() +
                             "\ntimezone: UTC\nsites:\n  - id: weir\n"
                             "    section: {shape: rectangular, width: 1.0, height: 1.0}\n"
                             "    roughness: 0.013\n    slope: 0.001\n";
    auto config = stagewell::parse_config(yaml, "test.yaml", dir.path());
    REQUIRE_MESSAGE(config.has_value(), config.error().front().to_string());
    auto opened = StatusApi::open(*config, [] { return stagewell::LiveFigures{}; });
    REQUIRE_MESSAGE(opened.has_value(), opened.error().message);
    api = std::move(*opened);
  }

  HttpAnswer get(std::string_view target, std::string_view method = "GET") {
    return api->answer(method, target, "", kNoon + 30'000);
  }
};

}  // namespace

TEST_CASE("routes and methods") {
  Fixture f;
  CHECK(f.get("/").status == 200);
  CHECK(f.get("/").content_type.starts_with("text/html"));
  CHECK(f.get("/api/sites").status == 200);
  CHECK(f.get("/api/sites/").status == 200);  // a trailing slash names the same resource
  CHECK(f.get("/api/sites/weir/readings").status == 200);
  CHECK(f.get("/api/nothing").status == 404);
  CHECK(f.get("/api/sites/nowhere/readings").status == 404);
  CHECK(f.get("/api/sites/weir").status == 200);  // one site (below)
  CHECK(f.get("/api/sites/nowhere").status == 404);
  CHECK(f.get("/api/sites", "HEAD").status == 200);
  for (const char* method : {"POST", "PUT", "DELETE", "OPTIONS", "TRACE"}) {
    CAPTURE(method);
    const auto answer = f.get("/api/sites", method);
    CHECK(answer.status == 405);
    CHECK(std::find(answer.headers.begin(), answer.headers.end(),
                    std::pair<std::string, std::string>{"Allow", "GET, HEAD"}) !=
          answer.headers.end());
  }
}

TEST_CASE("odd targets are refused with 400 and a JSON error") {
  Fixture f;
  for (const char* target :
       {"/api/sites/../metrics", "/api/./sites", "/api/sites/%2e%2E/x", "/api%2Fsites",
        "/api%2fsites", "/api%5Csites", "/api/si%zztes", "/api/sites%", "/api/sites%4",
        "/api/sites%00", "http://example.invalid/", "*", "/api/sites?x=1"}) {
    CAPTURE(target);
    const auto answer = f.get(target);
    CHECK(answer.status == 400);
    CHECK(json::parse(answer.body).contains("error"));
  }
  CHECK(f.get("/api//sites").status == 404);
  CHECK(f.get("/" + std::string(stagewell::kMaxTargetBytes, 'a')).status == 414);
}

TEST_CASE("a query parameter given twice is refused, not one of its values chosen") {
  Fixture f;
  for (const char* target :
       {"/api/sites/weir/readings?from=2026-05-01T00:00:00Z&from=2026-05-02T00:00:00Z",
        "/api/sites/weir/daily?to=2026-05-02&from=2026-05-01&to=2026-05-03",
        "/api/sites/weir/readings?from=2026-05-01T00:00:00Z&%66rom=x"}) {
    CAPTURE(target);
    const auto answer = f.get(target);
    CHECK(answer.status == 400);
    CHECK(json::parse(answer.body)["error"].get<std::string>().find("is given twice") !=
          std::string::npos);
  }
  CHECK(f.get("/api/sites/weir/daily?from=2026-05-01&to=2026-05-03").status == 200);
}

TEST_CASE("readings carry the stored numbers, both ends of the range included") {
  Fixture f;
  const auto answer =
      f.get("/api/sites/weir/readings?from=2026-05-01T11:58:00Z&to=2026-05-01T06:59:00-05:00");
  REQUIRE(answer.status == 200);
  const auto body = json::parse(answer.body);
  REQUIRE(body["readings"].size() == 2);  // 11:58 and 11:59 UTC
  CHECK(body["readings"][0]["time"] == "2026-05-01T11:58:00Z");
  CHECK(body["readings"][1]["stage"].get<double>() == 0.26);
  CHECK(body["readings"][1]["discharge"].get<double>() == 1.5);
  CHECK(body["stage_unit"] == "m");
  const auto latest = json::parse(f.get("/api/sites").body)["sites"][0]["latest"];
  CHECK(latest["time"] == "2026-05-01T12:00:00Z");
  CHECK(latest["age_s"].get<double>() == 30.0);
  CHECK(latest["flags"] == json::array({"spike"}));
}

TEST_CASE("/api/sites/{id}: the site with its units as UCUM codes and its latest reading") {
  Fixture f;
  const auto answer = f.get("/api/sites/weir");
  REQUIRE(answer.status == 200);
  const auto site = json::parse(answer.body)["site"];
  CHECK(site["id"] == "weir");
  // UCUM (The Unified Code for Units of Measure): m, m3/s, m3 for a metric configuration.
  CHECK(site["stage_unit"] == "m");
  CHECK(site["depth_unit"] == "m");
  CHECK(site["discharge_unit"] == "m3/s");
  CHECK(site["volume_unit"] == "m3");
  CHECK_FALSE(site.contains("unit_codes"));  // one spelling: no second set of units
  CHECK(site["location"].is_null());
  CHECK(site["latest"]["time"] == "2026-05-01T12:00:00Z");
  CHECK(site["latest"]["discharge"].get<double>() == 2.5);
  // The same entry as in the list.
  CHECK(json::parse(f.get("/api/sites").body)["sites"][0] == site);
  CHECK(f.get("/api/sites/weir?x=1").status == 400);
}

TEST_CASE("a '+' in a query value is a plus: an offset needs no escaping (RFC 3986, 3.4)") {
  Fixture f;
  // 13:58+02:00 is 11:58Z: the same two readings as the test above.
  for (const char* target : {"/api/sites/weir/readings?from=2026-05-01T13:58:00+02:00"
                             "&to=2026-05-01T13:59:00+02:00",
                             "/api/sites/weir/readings?from=2026-05-01T13:58:00%2B02:00"
                             "&to=2026-05-01T13:59:00%2B02:00"}) {
    CAPTURE(target);
    const auto answer = f.get(target);
    REQUIRE(answer.status == 200);
    CHECK(json::parse(answer.body)["readings"].size() == 2);
  }
}

TEST_CASE("a truncated readings answer links to the rest") {
  stagewell::test::TempDir dir;
  {
    auto store = stagewell::test::open_store(dir.db());
    const auto site = stagewell::test::add_site(store, "weir");
    auto batch = store.begin();
    REQUIRE(batch);
    for (std::int64_t i = 0; i <= stagewell::kMaxReadingsPerRequest; ++i) {
      REQUIRE(batch->insert(stagewell::test::reading(site, kNoon - 86'000'000 + i * 1000, 0.3)));
    }
    REQUIRE(batch->commit());
  }
  const std::string yaml = "units: metric\ndatabase: " + dir.db().string() +
                           "\nsites:\n  - id: weir\n"
                           "    section: {shape: rectangular, width: 1.0, height: 1.0}\n"
                           "    roughness: 0.013\n    slope: 0.001\n";
  auto config = stagewell::parse_config(yaml, "test.yaml", dir.path());
  REQUIRE(config.has_value());
  auto api = StatusApi::open(*config, [] { return stagewell::LiveFigures{}; });
  REQUIRE(api.has_value());
  const auto first = json::parse((*api)->answer("GET", "/api/sites/weir/readings", "", kNoon).body);
  CHECK(first["truncated"] == true);
  REQUIRE(first["readings"].size() == static_cast<std::size_t>(stagewell::kMaxReadingsPerRequest));
  // The link starts at the first reading not sent, and keeps the end of the range.
  const std::string next = first["next"];
  CHECK(next == "/api/sites/weir/readings?from=" +
                    stagewell::format_timestamp_utc(kNoon - 86'000'000 +
                                                    stagewell::kMaxReadingsPerRequest * 1000) +
                    "&to=" + first["to"].get<std::string>());
  const auto rest = json::parse((*api)->answer("GET", next, "", kNoon).body);
  CHECK(rest["truncated"] == false);
  CHECK(rest["next"].is_null());
  CHECK(rest["readings"].size() == 1);
}

TEST_CASE("bad ranges") {
  Fixture f;
  CHECK(f.get("/api/sites/weir/readings?from=noon").status == 400);
  CHECK(f.get("/api/sites/weir/readings?from=2026-05-01T12:00").status == 400);  // no offset
  CHECK(
      f.get("/api/sites/weir/readings?from=2026-05-02T00:00:00Z&to=2026-05-01T00:00:00Z").status ==
      400);
  // 31 days is the most; 31 days and a second is refused.
  CHECK(
      f.get("/api/sites/weir/readings?from=2026-04-01T00:00:00Z&to=2026-05-02T00:00:00Z").status ==
      200);
  CHECK(
      f.get("/api/sites/weir/readings?from=2026-04-01T00:00:00Z&to=2026-05-02T00:00:01Z").status ==
      400);
  CHECK(f.get("/api/sites/weir/daily?from=2026-02-29").status == 400);  // 2026 is no leap year
  CHECK(f.get("/api/sites/weir/daily?from=2024-02-29").status == 200);  // 2024 is
  CHECK(f.get("/api/sites/weir/daily?from=2026-5-01").status == 400);
  CHECK(f.get("/api/sites/weir/daily?from=2025-01-01&to=2026-01-01").status == 200);  // 366 d
  CHECK(f.get("/api/sites/weir/daily?from=2025-01-01&to=2026-01-02").status == 400);
}

TEST_CASE("metrics: OpenMetrics by default, 0.0.4 on request") {
  Fixture f;
  const auto open = f.api->answer("GET", "/metrics", "", kNoon);
  CHECK(open.content_type == "application/openmetrics-text; version=1.0.0; charset=utf-8");
  CHECK(open.body.ends_with("\n# EOF\n"));
  CHECK(open.body.find("# TYPE stagewell_readings_stored counter\n") != std::string::npos);
  CHECK(open.body.find("\nstagewell_site_reading_age_seconds{site=\"weir\"} 0\n") !=
        std::string::npos);
  const auto old = f.api->answer("GET", "/metrics", "text/plain;version=0.0.4", kNoon);
  CHECK(old.content_type == "text/plain; version=0.0.4; charset=utf-8");
  CHECK(old.body.find("# EOF") == std::string::npos);
  CHECK(old.body.find("# TYPE stagewell_readings_stored_total counter\n") != std::string::npos);
}
