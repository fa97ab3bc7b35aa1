// The gaugings table: a put replaces the gauging of the same site and time, set_computed changes
// only the computed values, and the `gaugings` view's difference and implied n follow their
// definitions (schema/009: 100 (measured - computed) / computed, n computed / measured), worked out
// by hand for round numbers.
#include "stagewell/gaugings_table.hpp"

#include <doctest/doctest.h>

#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::TempDir;

GaugingRecord gauging(SiteKey site, std::int64_t time_ms, double measured) {
  return GaugingRecord{.site = site,
                       .time_ms = time_ms,
                       .stage = 0.5,
                       .stage_interpolated = false,
                       .measured = measured,
                       .uncertainty = 5.0,
                       .method = "current meter",
                       .note = std::nullopt,
                       .computed = 2.0,
                       .roughness = 0.03,
                       .config = std::nullopt,
                       .imported_ms = 1};
}

TEST_CASE("put replaces, set_computed updates, the view computes difference and implied n") {
  TempDir dir;
  auto store = test::open_store(dir.db());
  const auto site = test::add_site(store, "canal");
  const auto other = test::add_site(store, "weir");
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(store.gaugings().put(*batch, gauging(site.key, 1000, 2.5)).has_value());
    REQUIRE(store.gaugings().put(*batch, gauging(site.key, 2000, 1.0)).has_value());
    REQUIRE(store.gaugings().put(*batch, gauging(other.key, 1000, 9.0)).has_value());
    auto again = gauging(site.key, 1000, 2.4);  // the same site and time: replaces
    again.config = site.config;
    REQUIRE(store.gaugings().put(*batch, again).has_value());
    REQUIRE(batch->commit().has_value());
  }
  auto rows = store.gaugings().range(site.key, INT64_MIN, INT64_MAX);
  REQUIRE(rows.has_value());
  REQUIRE(rows->size() == 2);
  CHECK((*rows)[0].measured == 2.4);
  CHECK((*rows)[0].method == "current meter");
  CHECK_FALSE((*rows)[0].note.has_value());
  CHECK((*rows)[0].config == site.config);

  auto view = store.gaugings().view(site.key, INT64_MIN, INT64_MAX);
  REQUIRE(view.has_value());
  REQUIRE(view->size() == 2);
  // 100 (2.4 - 2) / 2 = 20 %; 0.03 × 2 / 2.4 = 0.025.
  CHECK((*view)[0].difference_percent == doctest::Approx(20.0).epsilon(1e-12));
  CHECK((*view)[0].implied_roughness == doctest::Approx(0.025).epsilon(1e-12));
  CHECK((*view)[0].version.has_value());
  CHECK_FALSE((*view)[1].version.has_value());  // no version recorded

  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(
        store.gaugings()
            .set_computed(*batch, site.key, 2000, GaugingComputed{std::nullopt, 0.03, site.config})
            .has_value());
    REQUIRE(batch->commit().has_value());
  }
  view = store.gaugings().view(site.key, 2000, 2000);
  REQUIRE(view.has_value());
  REQUIRE(view->size() == 1);
  CHECK_FALSE((*view)[0].computed.has_value());
  CHECK_FALSE((*view)[0].difference_percent.has_value());
  CHECK_FALSE((*view)[0].implied_roughness.has_value());
  CHECK((*view)[0].measured == 1.0);
  auto weir = store.gaugings().range(other.key, INT64_MIN, INT64_MAX);
  REQUIRE(weir.has_value());
  CHECK(weir->size() == 1);
}

}  // namespace
}  // namespace stagewell
