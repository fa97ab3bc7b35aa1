// Alarms through the Ingestor: written in the same transaction as the readings that raise them,
// dropped with a batch that is dropped, and not raised twice across a restart. Expected times are
// worked by hand from the scripted readings below (rules: docs/checks-and-alarms.md, "Alarms").
#include <doctest/doctest.h>

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "../store/raw_connection.hpp"
#include "../store/store_test_support.hpp"
#include "stagewell/alarms.hpp"
#include "stagewell/config.hpp"
#include "stagewell/ingestor.hpp"

namespace stagewell {
namespace {

using test::TempDir;

constexpr std::int64_t kT0 = 1'778'738'400'000;  // 2026-05-14T06:00:00Z (Python datetime)
constexpr std::int64_t kMinute = 60'000;

// Rectangular 2 m wide, n 0.014, slope 0.001: by Manning's equation (closed form) a stage of
// 0.05 m gives about 0.03 m^3/s and 0.30 m about 0.51 m^3/s (worked by hand), either side of the
// 0.2 m^3/s threshold by far.
Config config_in(const TempDir& dir) {
  const std::string text = "units: metric\ndatabase: " + dir.db().string() + R"(
sites:
  - id: raceway
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
    alarms:
      low_flow: {below: 0.2, hysteresis: 0.05, hold: 10m}
      stale: {after: 30m}
)";
  auto config = parse_config(text, "test.yaml", dir.path());
  REQUIRE(config.has_value());
  return std::move(*config);
}

struct Harness {
  std::shared_ptr<std::int64_t> now = std::make_shared<std::int64_t>(kT0);
  std::unique_ptr<Ingestor> ingestor;

  explicit Harness(const Config& config) {
    auto opened = Ingestor::open(config, IngestorOptions{}, [now = now] { return *now; });
    REQUIRE_MESSAGE(opened.has_value(), opened.error().message);
    ingestor = std::move(*opened);
  }
  // A reading at minute `minute`, with the clock at its time.
  void feed(double minute, double stage) {
    const std::int64_t t = kT0 + static_cast<std::int64_t>(minute * kMinute);
    *now = t;
    REQUIRE(ingestor->reading({"raceway", t, stage, 1}, {"test", 1, "raw"}).has_value());
  }
};

struct Row {
  std::string kind, raised;
  std::optional<std::string> cleared;
};

std::vector<Row> alarm_rows(const TempDir& dir) {
  auto raw = test::raw_connection(dir.db());
  auto select = raw->prepare("SELECT kind, raised, cleared FROM alarms ORDER BY raised");
  REQUIRE(select.has_value());
  std::vector<Row> rows;
  while (select->step().value()) {
    rows.push_back(
        {select->column_text(0), select->column_text(1),
         select->column_is_null(2) ? std::nullopt : std::optional(select->column_text(2))});
  }
  return rows;
}

TEST_CASE("an alarm is committed with the readings that raise it, and survives a restart") {
  // Stage every 5 min: 0 0.30 | 5 0.05 (run) | 10 0.05 | 15 0.05 (held 10 min: RAISE at 06:15Z)
  TempDir dir;
  const Config config = config_in(dir);
  {
    Harness h(config);
    for (auto [minute, stage] : {std::pair{0.0, 0.30}, {5.0, 0.05}, {10.0, 0.05}, {15.0, 0.05}}) {
      h.feed(minute, stage);
    }
    CHECK(alarm_rows(dir).empty());  // not yet committed: nothing visible from outside
    REQUIRE(h.ingestor->commit().has_value());
    const auto rows = alarm_rows(dir);
    REQUIRE(rows.size() == 1);
    CHECK(rows[0].kind == "low_flow");
    CHECK(rows[0].raised == "2026-05-14T06:15:00Z");
    CHECK_FALSE(rows[0].cleared.has_value());
  }
  // Restart: still low at 20 (no second raise), 0.30 at 25 clears it.
  Harness h(config);
  h.feed(20, 0.05);
  REQUIRE(h.ingestor->commit().has_value());
  CHECK(alarm_rows(dir).size() == 1);
  h.feed(25, 0.30);
  REQUIRE(h.ingestor->commit().has_value());
  const auto rows = alarm_rows(dir);
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].cleared == "2026-05-14T06:25:00Z");
  auto open = h.ingestor->store().alarms().open();
  REQUIRE(open.has_value());
  CHECK(open->empty());
}

TEST_CASE("an alarm of a dropped batch is forgotten, and raised again when the data comes again") {
  TempDir dir;
  Harness h(config_in(dir));
  for (auto [minute, stage] : {std::pair{0.0, 0.30}, {5.0, 0.05}, {10.0, 0.05}, {15.0, 0.05}}) {
    h.feed(minute, stage);
  }
  REQUIRE(h.ingestor->reset().has_value());  // as after a failed commit: the batch is dropped
  CHECK(alarm_rows(dir).empty());
  // The same readings again (a source re-read from its stored progress): raised at 15 again.
  for (auto [minute, stage] : {std::pair{0.0, 0.30}, {5.0, 0.05}, {10.0, 0.05}, {15.0, 0.05}}) {
    h.feed(minute, stage);
  }
  REQUIRE(h.ingestor->commit().has_value());
  const auto rows = alarm_rows(dir);
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].raised == "2026-05-14T06:15:00Z");
}

TEST_CASE("the clock tick raises stale, once") {
  // after 30 min; last reading at 0. Tick at 29 min: nothing; at 30 min: RAISE at 06:30Z.
  TempDir dir;
  Harness h(config_in(dir));
  h.feed(0, 0.30);
  REQUIRE(h.ingestor->commit().has_value());
  *h.now = kT0 + 29 * kMinute;
  REQUIRE(h.ingestor->tick_alarms().has_value());
  CHECK_FALSE(h.ingestor->batch_open());
  *h.now = kT0 + 30 * kMinute;
  REQUIRE(h.ingestor->tick_alarms().has_value());
  REQUIRE(h.ingestor->commit().has_value());
  *h.now = kT0 + 40 * kMinute;
  REQUIRE(h.ingestor->tick_alarms().has_value());
  REQUIRE(h.ingestor->commit().has_value());
  const auto rows = alarm_rows(dir);
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].kind == "stale");
  CHECK(rows[0].raised == "2026-05-14T06:30:00Z");
}

}  // namespace
}  // namespace stagewell
