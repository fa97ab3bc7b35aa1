// Unit factors against published values. Factors are derived in units.hpp from the exact
// definitions (0.3048 m, 231 in^3, 43,560 ft^2, 86,400 s); here they must reproduce the digits
// that agencies and references print. A published figure rounded to d decimals is checked to
// half a unit in its last place.
#include "stagewell/units.hpp"

#include <doctest/doctest.h>

#include <cmath>

using namespace stagewell::units;

namespace {
// True when `value` rounds to `published`, printed with `step` as its last place.
bool rounds_to(double value, double published, double step) {
  return std::abs(value - published) <= 0.5 * step;
}
}  // namespace

TEST_CASE("the US gallon is 0.003785411784 m^3") {
  // scipy.constants.gallon = 0.003785411784 (exact by definition: 231 in^3).
  CHECK(us_gallon_m3 == doctest::Approx(0.003785411784).epsilon(1e-15));
}

TEST_CASE("an acre-foot is 43,560 cubic feet") {
  // USGS Circular, "Estimated use of water in the United States in 1990", conversion factors:
  // 1 acre-foot = 43,560 cubic feet.
  CHECK(to_m3(Volume::acre_ft) / to_m3(Volume::ft3) == doctest::Approx(43560.0).epsilon(1e-12));
}

TEST_CASE("a cubic foot per second for a day is 1.983471 acre-feet or 646,317 gallons") {
  // USGS Water-Supply Paper, surface-water records, definitions (1960): "1.983471 acre-feet, or
  // 646,317 gallons".
  const double cfs_day_m3 = to_m3_per_s(Flow::ft3_per_s) * seconds_per_day;
  CHECK(rounds_to(cfs_day_m3 / to_m3(Volume::acre_ft), 1.983471, 1e-6));
  CHECK(rounds_to(cfs_day_m3 / us_gallon_m3, 646317.0, 1.0));
}

TEST_CASE("a million gallons a day is 1.5472 cubic feet per second") {
  // North Carolina DEQ, Division of Water Resources, glossary (2008): 1 MGD = 1.5472 cfs.
  CHECK(rounds_to(to_m3_per_s(Flow::million_us_gal_per_day) / to_m3_per_s(Flow::ft3_per_s), 1.5472,
                  1e-4));
}

TEST_CASE("a cubic foot per second is 448.8 gallons per minute") {
  // Oregon Water Resources Department: 1 cfs = 448.8 gal/min.
  CHECK(rounds_to(to_m3_per_s(Flow::ft3_per_s) / to_m3_per_s(Flow::us_gal_per_min), 448.8, 0.1));
}

TEST_CASE("Manning's constant in US customary units") {
  // Closed form [C]: k = (1 m / 0.3048 m)^(1/3) = 1.4859185775...
  CHECK(manning_k(System::us) == doctest::Approx(1.4859185775).epsilon(1e-10));
  // F. M. White, "Fluid Mechanics", ch. 10, eq. 10.17, prints it as 1.486.
  CHECK(rounds_to(manning_k(System::us), 1.486, 1e-3));
  CHECK(manning_k(System::metric) == 1.0);  // White eq. 10.17: alpha = 1.0 in SI
}

TEST_CASE("standard gravity") {
  // 9.80665 m/s^2 by definition (3rd CGPM, 1901; from memory); in ft/s^2 that is 32.174 (closed
  // form: 9.80665 / 0.3048 = 32.1740485...).
  CHECK(gravity(System::metric) == 9.80665);
  CHECK(rounds_to(gravity(System::us), 32.174, 1e-3));
}

TEST_CASE("flow units: litres and metric") {
  // Closed form [C]: 1 L = 0.001 m^3; 1 megalitre = 1000 m^3.
  CHECK(to_m3_per_s(Flow::litres_per_s) == doctest::Approx(0.001).epsilon(1e-15));
  CHECK(to_m3(Volume::megalitres) == doctest::Approx(1000.0).epsilon(1e-15));
  // Closed form [C]: 1 ft^3 = 0.3048^3 m^3 = 0.028316846592 m^3.
  CHECK(to_m3(Volume::ft3) == doctest::Approx(0.028316846592).epsilon(1e-13));
  // Closed form [C]: 1 Mgal = 10^6 x 231 x 0.0254^3 m^3 = 3785.411784 m^3.
  CHECK(to_m3(Volume::million_us_gal) == doctest::Approx(3785.411784).epsilon(1e-13));
}

TEST_CASE("length units of stage readings") {
  // Closed form [C]: the international inch and foot (1959 agreement).
  CHECK(to_m(Length::in) == 0.0254);
  CHECK(to_m(Length::ft) == 0.3048);
  CHECK(to_m(Length::cm) == doctest::Approx(0.01).epsilon(1e-15));
  CHECK(to_m(Length::mm) == doctest::Approx(0.001).epsilon(1e-15));
  CHECK(length_to_m(System::us) == 0.3048);
}

TEST_CASE("unit names are read as the header documents them") {
  // The spellings are the configuration contract written in units.hpp.
  CHECK(parse_system("metric") == System::metric);
  CHECK(parse_system("us") == System::us);
  CHECK_FALSE(parse_system("imperial").has_value());
  CHECK(parse_length("in") == Length::in);
  CHECK_FALSE(parse_length("yd").has_value());
  CHECK(parse_flow("Mgal/d") == Flow::million_us_gal_per_day);
  CHECK(parse_flow("gal/min") == Flow::us_gal_per_min);
  CHECK(parse_volume("acre-ft") == Volume::acre_ft);
  CHECK_FALSE(parse_volume("acre-feet").has_value());
}

TEST_CASE("unit names in any case, trade abbreviations and UCUM codes are accepted") {
  // What a user types: "l/s" for litres per second (case is not meaningful to people here;
  // every spelling within a kind stays unique ignoring case), the common-practice
  // abbreviations cfs, gpm and mgd, and the UCUM code that JSON and CSV output carry.
  CHECK(parse_flow("l/s") == Flow::litres_per_s);
  CHECK(parse_flow("M3/S") == Flow::m3_per_s);
  CHECK(parse_flow("cfs") == Flow::ft3_per_s);
  CHECK(parse_flow("GPM") == Flow::us_gal_per_min);
  CHECK(parse_flow("MGD") == Flow::million_us_gal_per_day);
  CHECK(parse_flow("[ft_i]3/s") == Flow::ft3_per_s);
  CHECK(parse_length("CM") == Length::cm);
  CHECK(parse_length("[in_i]") == Length::in);
  CHECK(parse_volume("ml") == Volume::megalitres);  // no one keeps daily volumes in millilitres
  CHECK(parse_volume("l") == Volume::litres);
  CHECK(parse_volume("GAL") == Volume::us_gal);
  CHECK(parse_volume("43560.[ft_i]3") == Volume::acre_ft);
  // UCUM codes are case-sensitive (UCUM's case-sensitive form): "[FT_I]3/S" is not one.
  CHECK_FALSE(parse_flow("[FT_I]3/S").has_value());
  CHECK_FALSE(parse_flow("ft3/min").has_value());
}

TEST_CASE("litres and US gallons as volumes") {
  // Closed form [C]: 1 L = 0.001 m^3; 1 US gal = 231 in^3 = 0.003785411784 m^3.
  CHECK(to_m3(Volume::litres) == doctest::Approx(0.001).epsilon(1e-15));
  CHECK(to_m3(Volume::us_gal) == doctest::Approx(0.003785411784).epsilon(1e-13));
  CHECK(to_m3(Volume::million_us_gal) / to_m3(Volume::us_gal) ==
        doctest::Approx(1e6).epsilon(1e-12));
}
