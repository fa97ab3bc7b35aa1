#include "stagewell/units.hpp"

#include <array>
#include <cmath>

namespace stagewell::units {
namespace {

template <typename E>
struct Entry {
  E unit;
  std::string_view option;  // ASCII spelling accepted on input
  std::string_view symbol;  // spelling for output
  double factor;            // SI units (m, m^3/s, m^3) in one unit
};

constexpr std::array<Entry<Length>, 5> kLengths{{
    {Length::m, "m", "m", 1.0},
    {Length::cm, "cm", "cm", 0.01},
    {Length::mm, "mm", "mm", 0.001},
    {Length::ft, "ft", "ft", foot_m},
    {Length::in, "in", "in", inch_m},
}};

constexpr std::array<Entry<Flow>, 5> kFlows{{
    {Flow::m3_per_s, "m3/s", "m³/s", 1.0},
    {Flow::litres_per_s, "L/s", "L/s", 0.001},
    {Flow::ft3_per_s, "ft3/s", "ft³/s", cubic_foot_m3},
    {Flow::us_gal_per_min, "gal/min", "US gal/min", us_gallon_m3 / 60.0},
    {Flow::million_us_gal_per_day, "Mgal/d", "million US gal/d",
     1e6 * us_gallon_m3 / seconds_per_day},
}};

constexpr std::array<Entry<Volume>, 5> kVolumes{{
    {Volume::m3, "m3", "m³", 1.0},
    {Volume::megalitres, "ML", "ML", 1000.0},
    {Volume::ft3, "ft3", "ft³", cubic_foot_m3},
    {Volume::acre_ft, "acre-ft", "acre-ft", acre_foot_m3},
    {Volume::million_us_gal, "Mgal", "million US gal", 1e6 * us_gallon_m3},
}};

template <typename E, std::size_t N>
std::optional<E> parse(const std::array<Entry<E>, N>& table, std::string_view text) {
  for (const auto& entry : table) {
    if (entry.option == text) return entry.unit;
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

std::string length_choices() { return choices(kLengths); }
std::string flow_choices() { return choices(kFlows); }
std::string volume_choices() { return choices(kVolumes); }

std::string_view ucum(Length unit) {
  switch (unit) {
    case Length::m: return "m";
    case Length::cm: return "cm";
    case Length::mm: return "mm";
    case Length::ft: return "[ft_i]";
    case Length::in: return "[in_i]";
  }
  return "m";
}

std::string_view ucum_length(System system) {
  return system == System::metric ? "m" : "[ft_i]";
}
std::string_view ucum_discharge(System system) {
  return system == System::metric ? "m3/s" : "[ft_i]3/s";
}
std::string_view ucum_volume(System system) {
  return system == System::metric ? "m3" : "[ft_i]3";
}

}  // namespace stagewell::units
