// How `stagewell` prints for people and for JSON: numbers, a section in one line, the caution.
#pragma once

#include <iosfwd>
#include <nlohmann/json_fwd.hpp>
#include <optional>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell::cli {

// A number for people: `significant` digits, no exponent for ordinary magnitudes.
std::string format_number(double value, int significant = 4);

// A number for JSON: full precision, null when not finite.
nlohmann::json json_number(double value);

// --flow-units as typed (empty: the configuration's own unit, m3/s or ft3/s). On an unknown
// name it has told the user the choices and returns nullopt (exit status kUsage).
std::optional<units::Flow> flow_unit_or_report(const std::string& text, units::System system);

// A discharge in the configuration's unit, in `unit`.
double flow_in(double discharge, units::System system, units::Flow unit);

// The short caution printed under results meant for people.
void print_caution(std::ostream& out);

// One line describing a site's section, e.g. "trapezoidal, bottom 3 m, side slopes 1.5:1, 1.2 m
// deep".
std::string describe_section(const SectionSpec& spec, units::System system);

}  // namespace stagewell::cli
