// A recomputation stopped part-way (the process killed between two steps) and started again is
// one recomputation: one row in `recomputation_runs`, whose start is the first run's, whose period
// and counts cover both runs, marked finished only by the step that did the last readings. Every
// reading ends computed by Manning's equation with the new roughness, each recomputed once.
#include <doctest/doctest.h>

#include <cmath>
#include <memory>
#include <string>

#include "source_test_support.hpp"
#include "stagewell/recomputation.hpp"

namespace stagewell {
namespace {

constexpr int kReadings = 100;
constexpr double kNewRoughness = 0.020;

// Manning's equation (SI): Q = (1/n) A R^(2/3) S^(1/2), for the test's rectangular section 2.0 m
// wide at slope 0.001, depth = stage (no offset).
double manning(double depth, double n) {
  const double area = 2.0 * depth;
  const double radius = area / (2.0 + 2.0 * depth);
  return area * std::pow(radius, 2.0 / 3.0) * std::sqrt(0.001) / n;
}

std::unique_ptr<Recomputation> plan(Store& store, const Config& config, std::int64_t now) {
  auto planned = Recomputation::plan(store, config, "g1", now);
  REQUIRE_MESSAGE(planned.has_value(), planned.error().message);
  return std::move(*planned);
}

TEST_CASE("a recomputation stopped part-way is carried on, and recorded once") {
  test::Service service;
  for (int i = 0; i < kReadings; ++i) {
    Record record;
    record.site = "g1";
    record.time_ms = test::kT0 + i * test::kMinute;
    record.stage = 0.30 + 0.002 * i;
    record.line_number = i + 1;
    REQUIRE(service.ingestor->reading(record, {"test", record.line_number, ""}).has_value());
  }
  REQUIRE(service.ingestor->commit().has_value());
  Store& store = service.ingestor->store();
  const Config changed = test::config_in(service.dir, "", kNewRoughness);
  auto raw = test::raw_connection(service.dir.db());
  const auto rows = [&] { return test::query_int(*raw, "SELECT count(*) FROM recomputation_runs"); };
  const auto unfinished = [&] {
    return test::query_int(*raw,
                           "SELECT count(*) FROM recomputation_runs WHERE finished_ms IS NULL");
  };

  const std::int64_t first_start = *service.now;
  {
    auto first = plan(store, changed, first_start);
    REQUIRE(first->step(store, 30).has_value());
    CHECK_FALSE(first->done());
  }  // stopped here: 30 readings done, the row says so and is not finished
  CHECK(rows() == 1);
  CHECK(unfinished() == 1);
  CHECK(test::query_int(*raw, "SELECT readings_changed FROM recomputation_runs") == 30);
  CHECK(test::query_text(*raw, "SELECT finished FROM recomputations") == "");

  auto second = plan(store, changed, first_start + 3'600'000);
  while (!second->done()) REQUIRE(second->step(store, 30).has_value());
  CHECK(rows() == 1);
  CHECK(unfinished() == 0);
  CHECK(test::query_int(*raw, "SELECT readings_changed FROM recomputation_runs") == kReadings);
  CHECK(test::query_int(*raw, "SELECT at_ms FROM recomputation_runs") == first_start);
  CHECK(test::query_int(*raw, "SELECT period_from_ms FROM recomputation_runs") == test::kT0);
  CHECK(test::query_int(*raw, "SELECT period_to_ms FROM recomputation_runs") ==
        test::kT0 + (kReadings - 1) * test::kMinute);
  CHECK(test::query_int(*raw, "SELECT finished_ms >= at_ms FROM recomputation_runs") == 1);
  CHECK(test::query_text(*raw, "SELECT config_before || ' ' || config_after FROM "
                               "recomputation_runs")
            .find(',') == std::string::npos);  // one version before, one after

  // Every reading carries the new roughness's discharge (Manning's equation, above), within the
  // rating table's stated bound (rating.hpp: 0.01 % of the direct formula).
  double worst = 0.0;
  for (int i = 0; i < kReadings; ++i) {
    const double stage = 0.30 + 0.002 * i;
    const double stored = std::stod(test::query_text(
        *raw, "SELECT printf('%.17g', discharge) FROM readings WHERE time_ms = " +
                  std::to_string(test::kT0 + i * test::kMinute)));
    worst = std::max(worst, std::fabs(stored - manning(stage, kNewRoughness)) /
                                manning(stage, kNewRoughness));
  }
  CHECK(worst < 1e-4);

  // Nothing left to do: no new row, the finished one unchanged.
  auto third = plan(store, changed, first_start + 7'200'000);
  CHECK(third->done());
  CHECK(rows() == 1);
  CHECK(unfinished() == 0);
}

}  // namespace
}  // namespace stagewell
