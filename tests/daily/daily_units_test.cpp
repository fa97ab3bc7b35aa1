// Daily volumes in the units of water accounting, against published conversion figures. Each
// check runs a whole steady day through compute_day and Conversion, so it tests the factors the
// reports actually use. A figure published to d decimals is checked to half a unit in its last
// place.
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "stagewell/daily.hpp"
#include "stagewell/statistics.hpp"

namespace stagewell::stats {
namespace {

bool rounds_to(double value, double published, double step) {
  return std::abs(value - published) <= 0.5 * step;
}

// The volume of one UTC day of steady `flow` (the system's discharge unit), in that system's
// volume unit.
double steady_day_volume(double flow) {
  auto zone = TimeZone::parse("UTC");
  REQUIRE(zone.has_value());
  const daily::DayCalendar calendar(*zone);
  const Day day(2026, 7, 1);
  std::vector<daily::DayReading> readings;
  for (std::int64_t t = calendar.start_ms(day); t <= calendar.start_ms(day + 1); t += 900'000) {
    readings.push_back({t, flow, {}});
  }
  const auto figures = daily::compute_day(readings, day, calendar, daily::DayRules{});
  REQUIRE(figures.volume.has_value());
  return *figures.volume;
}

TEST_CASE("a cubic foot per second for a day is 1.983471 acre-feet, or 646,317 gallons") {
  // USGS Water-Supply Paper, surface-water records, definitions (1960): "1.983471 acre-feet, or
  // 646,317 gallons".
  const double ft3 = steady_day_volume(1.0);  // US units: ft^3/s in, ft^3 out
  const auto acre_feet = Conversion::make(units::System::us, std::nullopt, units::Volume::acre_ft);
  CHECK(rounds_to(*acre_feet.volume_of(ft3), 1.983471, 1e-6));
  const auto gallons =
      Conversion::make(units::System::us, std::nullopt, units::Volume::million_us_gal);
  CHECK(rounds_to(*gallons.volume_of(ft3) * 1e6, 646317.0, 1.0));
  // And the stored unit itself is not converted at all: 86,400 ft^3 [C].
  CHECK(*Conversion::make(units::System::us).volume_of(ft3) == doctest::Approx(86400.0));
}

TEST_CASE("a million gallons a day is 1.5472 cfs and 3.0689 acre-feet a day") {
  // North Carolina DEQ, Division of Water Resources, glossary (2008): 1 MGD = 1.5472 cfs;
  // 3.0689 acre-ft/day; 694 gal/min.
  const auto mgd = Conversion::make(units::System::us, units::Flow::million_us_gal_per_day);
  CHECK(rounds_to(1.0 / mgd.flow_factor, 1.5472, 1e-4));  // ft^3/s in one Mgal/d
  const auto gpm = Conversion::make(units::System::us, units::Flow::us_gal_per_min);
  CHECK(rounds_to(gpm.flow_factor / mgd.flow_factor, 694.0, 1.0));  // gal/min in one Mgal/d
  // A metric site carrying 1 Mgal/d (in m^3/s) for a day: 3.0689 acre-feet.
  const double m3_per_s = units::to_m3_per_s(units::Flow::million_us_gal_per_day);
  const auto acre_feet =
      Conversion::make(units::System::metric, std::nullopt, units::Volume::acre_ft);
  CHECK(rounds_to(*acre_feet.volume_of(steady_day_volume(m3_per_s)), 3.0689, 1e-4));
}

TEST_CASE("a cubic foot per second is 448.8 gallons a minute and 0.028316846592 m^3/s") {
  // Oregon Water Resources Department: 1 cfs = 448.8 gal/min. Exact [C]: 0.3048^3 m^3/s.
  const auto gpm = Conversion::make(units::System::us, units::Flow::us_gal_per_min);
  CHECK(rounds_to(*gpm.flow_of(1.0), 448.8, 0.1));
  const auto si = Conversion::make(units::System::us, units::Flow::m3_per_s, units::Volume::m3);
  CHECK(*si.flow_of(1.0) == doctest::Approx(0.028316846592).epsilon(1e-12));
  // An acre-foot is 43,560 ft^3 on the international foot: 1233.48183754752 m^3 [C] (the US
  // survey foot would give 1233.4892, 6 ppm more).
  const auto to_m3 = Conversion::make(units::System::us, std::nullopt, units::Volume::m3);
  CHECK(*to_m3.volume_of(43560.0) == doctest::Approx(1233.48183754752).epsilon(1e-12));
  // Megalitres from a metric day: 1 ML = 1000 m^3 exactly.
  const auto ml =
      Conversion::make(units::System::metric, units::Flow::litres_per_s, units::Volume::megalitres);
  CHECK(*ml.volume_of(86400.0) == doctest::Approx(86.4).epsilon(1e-12));
  CHECK(*ml.flow_of(1.0) == doctest::Approx(1000.0).epsilon(1e-12));
}

}  // namespace
}  // namespace stagewell::stats
