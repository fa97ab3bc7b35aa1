#include "stagewell/units.hpp"

#include <array>
#include <cmath>

#include "stagewell/ascii_case.hpp"

namespace stagewell::units {
namespace {

template <typename E>
struct Entry {
  E unit;
  std::string_view option;      // ASCII spelling listed in --help, accepted on input in any case
  std::string_view symbol;      // spelling for people: text, the page, logs
  std::string_view ucum;        // UCUM code for machine-readable output, also accepted on input
  double factor;                // SI units (m, m^3/s, m^3) in one unit
  std::string_view alias = {};  // another accepted spelling (a trade abbreviation), any case
};

// UCUM codes: "[ft_i]" and "[in_i]" are the international foot and inch, "[gal_us]" the US
// gallon; "10*6" is the factor one million and "." multiplies, so "10*6.[gal_us]" is a million
// US gallons. UCUM's acre units are the survey and British acres, so the acre-foot on the
// international foot is written as what it is, 43,560 cubic feet. tests/e2e/ucum_codes_test.py
// checks every code and factor with the UCUM reference library.
constexpr std::array<Entry<Length>, 5> kLengths{{
    {Length::m, "m", "m", "m", 1.0},
    {Length::cm, "cm", "cm", "cm", 0.01},
    {Length::mm, "mm", "mm", "mm", 0.001},
    {Length::ft, "ft", "ft", "[ft_i]", foot_m},
    {Length::in, "in", "in", "[in_i]", inch_m},
}};

constexpr std::array<Entry<Flow>, 5> kFlows{{
    {Flow::m3_per_s, "m3/s", "m³/s", "m3/s", 1.0},
    {Flow::litres_per_s, "L/s", "L/s", "L/s", 0.001},
    {Flow::ft3_per_s, "ft3/s", "ft³/s", "[ft_i]3/s", cubic_foot_m3, "cfs"},
    {Flow::us_gal_per_min, "gal/min", "US gal/min", "[gal_us]/min", us_gallon_m3 / 60.0, "gpm"},
    {Flow::million_us_gal_per_day, "Mgal/d", "million US gal/d", "10*6.[gal_us]/d",
     1e6 * us_gallon_m3 / seconds_per_day, "mgd"},
}};

constexpr std::array<Entry<Volume>, 7> kVolumes{{
    {Volume::m3, "m3", "m³", "m3", 1.0},
    {Volume::litres, "L", "L", "L", 0.001},
    {Volume::megalitres, "ML", "ML", "ML", 1000.0},
    {Volume::ft3, "ft3", "ft³", "[ft_i]3", cubic_foot_m3},
    {Volume::us_gal, "gal", "US gal", "[gal_us]", us_gallon_m3},
    {Volume::acre_ft, "acre-ft", "acre-ft", "43560.[ft_i]3", acre_foot_m3},
    {Volume::million_us_gal, "Mgal", "million US gal", "10*6.[gal_us]", 1e6 * us_gallon_m3},
}};

// The option spelling or the alias in any case ("l/s", "CFS"), or the UCUM code exactly (UCUM is
// case-sensitive). Lengths, flows and volumes each have spellings unique ignoring case.
template <typename E, std::size_t N>
std::optional<E> parse(const std::array<Entry<E>, N>& table, std::string_view text) {
  for (const auto& entry : table) {
    if (equal_ignoring_case(entry.option, text) || entry.ucum == text ||
        (!entry.alias.empty() && equal_ignoring_case(entry.alias, text))) {
      return entry.unit;
    }
  }
  return std::nullopt;
}

template <typename E, std::size_t N>
const Entry<E>& lookup(const std::array<Entry<E>, N>& table, E unit) {
  for (const auto& entry : table) {
    if (entry.unit == unit) return entry;
  }
  return table.front();  // unreachable: every enumerator has an entry
}

template <typename E, std::size_t N>
std::string choices(const std::array<Entry<E>, N>& table) {
  std::string out;
  for (const auto& entry : table) {
    if (!out.empty()) out += ", ";
    out += entry.option;
  }
  return out;
}

}  // namespace

std::optional<System> parse_system(std::string_view text) {
  if (text == "metric") return System::metric;
  if (text == "us") return System::us;
  return std::nullopt;
}

std::string_view name(System system) { return system == System::metric ? "metric" : "us"; }

double length_to_m(System system) { return system == System::metric ? 1.0 : foot_m; }

double manning_k(System system) {
  // Manning's equation is dimensionally k/n * A R^(2/3) S^(1/2) with n carrying s/m^(1/3); the
  // same n in feet needs k = (1 ft / 1 m)^(-1/3) = (1/0.3048)^(1/3), exact by the foot's
  // definition.
  static const double k_us = std::cbrt(1.0 / foot_m);
  return system == System::metric ? 1.0 : k_us;
}

double gravity(System system) {
  return system == System::metric ? standard_gravity_m_s2 : standard_gravity_m_s2 / foot_m;
}

std::string_view length_symbol(System system) { return system == System::metric ? "m" : "ft"; }
std::string_view discharge_symbol(System system) {
  return system == System::metric ? "m³/s" : "ft³/s";
}
std::string_view area_symbol(System system) { return system == System::metric ? "m²" : "ft²"; }
std::string_view velocity_symbol(System system) {
  return system == System::metric ? "m/s" : "ft/s";
}
std::string_view volume_symbol(System system) { return system == System::metric ? "m³" : "ft³"; }

std::optional<Length> parse_length(std::string_view text) { return parse(kLengths, text); }
std::string_view symbol(Length unit) { return lookup(kLengths, unit).symbol; }
double to_m(Length unit) { return lookup(kLengths, unit).factor; }

std::optional<Flow> parse_flow(std::string_view text) { return parse(kFlows, text); }
std::string_view symbol(Flow unit) { return lookup(kFlows, unit).symbol; }
std::string_view option_name(Flow unit) { return lookup(kFlows, unit).option; }
double to_m3_per_s(Flow unit) { return lookup(kFlows, unit).factor; }
Flow default_flow(System system) {
  return system == System::metric ? Flow::m3_per_s : Flow::ft3_per_s;
}

std::optional<Volume> parse_volume(std::string_view text) { return parse(kVolumes, text); }
std::string_view symbol(Volume unit) { return lookup(kVolumes, unit).symbol; }
std::string_view option_name(Volume unit) { return lookup(kVolumes, unit).option; }
double to_m3(Volume unit) { return lookup(kVolumes, unit).factor; }
Volume default_volume(System system) { return system == System::metric ? Volume::m3 : Volume::ft3; }

std::vector<Listed> listing() {
  std::vector<Listed> out;
  const auto add = [&out](std::string_view kind, std::string_view si, const auto& table) {
    for (const auto& e : table) {
      out.push_back({kind, e.option, e.alias, e.symbol, e.ucum, e.factor, si});
    }
  };
  add("length", "m", kLengths);
  add("flow", "m3/s", kFlows);
  add("volume", "m3", kVolumes);
  return out;
}

std::string length_choices() { return choices(kLengths); }
std::string flow_choices() { return choices(kFlows); }
std::string volume_choices() { return choices(kVolumes); }

std::string_view ucum(Length unit) { return lookup(kLengths, unit).ucum; }
std::string_view ucum(Flow unit) { return lookup(kFlows, unit).ucum; }
std::string_view ucum(Volume unit) { return lookup(kVolumes, unit).ucum; }

std::string_view ucum_length(System system) {
  return ucum(system == System::metric ? Length::m : Length::ft);
}
std::string_view ucum_discharge(System system) { return ucum(default_flow(system)); }
std::string_view ucum_volume(System system) { return ucum(default_volume(system)); }
std::string_view ucum_area(System system) { return system == System::metric ? "m2" : "[ft_i]2"; }
std::string_view ucum_velocity(System system) {
  return system == System::metric ? "m/s" : "[ft_i]/s";
}

}  // namespace stagewell::units
