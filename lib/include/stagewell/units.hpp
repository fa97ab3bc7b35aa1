// Units of measure. Every factor is derived from exact definitions:
//   1 ft = 0.3048 m (international foot), 1 in = 0.0254 m, 1 US gal = 231 in^3,
//   1 acre = 43,560 ft^2, 1 day = 86,400 s, standard gravity g = 9.80665 m/s^2.
// The acre-foot is on the international foot (43,560 ft^3 = 1233.48183754752 m^3), not the US
// survey foot (6 ppm larger).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace stagewell::units {

inline constexpr double foot_m = 0.3048;
inline constexpr double inch_m = 0.0254;
inline constexpr double us_gallon_m3 = 231.0 * inch_m * inch_m * inch_m;  // 0.003785411784
inline constexpr double cubic_foot_m3 = foot_m * foot_m * foot_m;
inline constexpr double acre_foot_m3 = 43560.0 * cubic_foot_m3;
inline constexpr double seconds_per_day = 86400.0;
inline constexpr double standard_gravity_m_s2 = 9.80665;

// The unit system of a configuration: lengths in m or ft, discharge in m^3/s or ft^3/s.
enum class System { metric, us };

std::optional<System> parse_system(std::string_view text);  // "metric" | "us"
std::string_view name(System system);
double length_to_m(System system);  // metres in one length unit of the system
double manning_k(System system);    // 1 in metric; (1/0.3048)^(1/3) = 1.4859185775... in US
double gravity(System system);      // 9.80665 m/s^2, or 9.80665/0.3048 ft/s^2
std::string_view length_symbol(System system);     // "m" | "ft"
std::string_view discharge_symbol(System system);  // "m³/s" | "ft³/s"
std::string_view area_symbol(System system);       // "m²" | "ft²"
std::string_view velocity_symbol(System system);   // "m/s" | "ft/s"
std::string_view volume_symbol(System system);     // "m³" | "ft³"

// Parsing takes each unit's ASCII spelling (the one --help lists) in any case ("l/s", "CM"), a
// trade abbreviation where there is one ("cfs", "gpm", "mgd"), or its UCUM code exactly.

// Units of incoming stage readings.
enum class Length { m, cm, mm, ft, in };
std::optional<Length> parse_length(std::string_view text);  // "m" "cm" "mm" "ft" "in"
std::string_view symbol(Length unit);
double to_m(Length unit);  // metres in one unit

// Units a flow can be shown in.
enum class Flow { m3_per_s, litres_per_s, ft3_per_s, us_gal_per_min, million_us_gal_per_day };
std::optional<Flow> parse_flow(std::string_view text);  // "m3/s" "L/s" "ft3/s" "gal/min" "Mgal/d"
std::string_view symbol(Flow unit);                     // with superscripts: "m³/s" ...
std::string_view option_name(Flow unit);                // the ASCII spelling parse_flow takes
double to_m3_per_s(Flow unit);
Flow default_flow(System system);  // m3/s or ft3/s

// Units a volume can be shown in.
enum class Volume { m3, litres, megalitres, ft3, us_gal, acre_ft, million_us_gal };
// "m3" "L" "ML" "ft3" "gal" "acre-ft" "Mgal"
std::optional<Volume> parse_volume(std::string_view text);
std::string_view symbol(Volume unit);
std::string_view option_name(Volume unit);
double to_m3(Volume unit);
Volume default_volume(System system);  // m3 or ft3

// UCUM codes (The Unified Code for Units of Measure, case-sensitive form), the one spelling of
// every machine-readable place: the database's views, JSON, CSV headers, exports, metrics.
// "m", "cm", "mm", "[ft_i]", "[in_i]" (international foot and inch); discharge "m3/s",
// "[ft_i]3/s", "L/s", "[gal_us]/min", "10*6.[gal_us]/d"; volume "m3", "[ft_i]3", "L", "ML",
// "[gal_us]", "43560.[ft_i]3" (acre-ft), "10*6.[gal_us]". Human-readable text uses symbol().
std::string_view ucum(Length unit);
std::string_view ucum(Flow unit);
std::string_view ucum(Volume unit);
std::string_view ucum_length(System system);
std::string_view ucum_discharge(System system);
std::string_view ucum_volume(System system);
std::string_view ucum_area(System system);      // "m2" | "[ft_i]2"
std::string_view ucum_velocity(System system);  // "m/s" | "[ft_i]/s"

// Every unit the options and the configuration accept, for `stagewell units`: its kind ("length",
// "flow", "volume"), spellings, and value in SI units (m, m3/s, m3).
struct Listed {
  std::string_view kind;
  std::string_view option;
  std::string_view alias;  // empty when none
  std::string_view symbol;
  std::string_view ucum;
  double si_factor;
  std::string_view si_ucum;  // "m", "m3/s" or "m3"
};
std::vector<Listed> listing();

// Lists for error messages and --help: "m, cm, mm, ft, in".
std::string length_choices();
std::string flow_choices();
std::string volume_choices();

}  // namespace stagewell::units
