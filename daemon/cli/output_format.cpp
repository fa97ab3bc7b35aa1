#include "output_format.hpp"

#include <fmt/format.h>

#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>

namespace stagewell::cli {

std::string format_number(double value, int significant) {
  if (!std::isfinite(value)) return value > 0 ? "inf" : (value < 0 ? "-inf" : "n/a");
  if (value == 0.0) return "0";
  const double magnitude = std::fabs(value);
  if (magnitude >= 1e-4 && magnitude < 1e9) {
    // Fixed notation with `significant` significant digits, trailing zeros kept so that columns
    // of the same quantity line up.
    const int integer_digits = static_cast<int>(std::floor(std::log10(magnitude))) + 1;
    const int decimals = std::max(0, significant - integer_digits);
    return fmt::format("{:.{}f}", value, decimals);
  }
  return fmt::format("{:.{}e}", value, significant - 1);
}

nlohmann::json json_number(double value) {
  if (!std::isfinite(value)) return nullptr;
  return value;
}

std::optional<units::Flow> flow_unit_or_report(const std::string& text, units::System system) {
  if (text.empty()) return units::default_flow(system);
  const auto unit = units::parse_flow(text);
  if (!unit) {
    std::cerr << fmt::format("unknown --flow-units '{}'; use one of: {} (any case)\n", text,
                             units::flow_choices());
  }
  return unit;
}

double flow_in(double discharge, units::System system, units::Flow unit) {
  return discharge * units::to_m3_per_s(units::default_flow(system)) / units::to_m3_per_s(unit);
}

void print_caution(std::ostream& out) {
  out << "Caution: discharge from Manning's equation is an estimate (assumed roughness, steady "
         "uniform flow);\nverify it with field measurements. Not for life-safety decisions "
         "without a licensed engineer's review.\n";
}

std::string describe_section(const SectionSpec& spec, units::System system) {
  const auto length = units::length_symbol(system);
  const auto slopes = [&] {
    if (spec.side_slope_left == spec.side_slope_right) {
      return fmt::format("side slopes {}:1", format_number(spec.side_slope_left, 3));
    }
    return fmt::format("side slopes {}:1 left, {}:1 right", format_number(spec.side_slope_left, 3),
                       format_number(spec.side_slope_right, 3));
  };
  switch (spec.shape) {
    case Shape::rectangular:
      return fmt::format("rectangular, {} {} wide, {} {} deep", format_number(spec.width, 3),
                         length, format_number(spec.height, 3), length);
    case Shape::trapezoidal:
      return fmt::format("trapezoidal, bottom {} {}, {}, {} {} deep", format_number(spec.width, 3),
                         length, slopes(), format_number(spec.height, 3), length);
    case Shape::triangular:
      return fmt::format("triangular, {}, {} {} deep", slopes(), format_number(spec.height, 3),
                         length);
    case Shape::circular:
      return fmt::format("circular, {} {} diameter", format_number(spec.diameter, 3), length);
    case Shape::surveyed:
      return fmt::format("surveyed, {} points, {} subsection{}", spec.points.size(),
                         spec.breaks.size() + 1, spec.breaks.empty() ? "" : "s");
  }
  return std::string(name(spec.shape));
}

}  // namespace stagewell::cli
