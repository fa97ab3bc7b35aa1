// Readers for single values — the "type, bounds, validator" columns of the key tables. Each one
// reports what is wrong with the value, with what is allowed, and returns nullopt when the value
// cannot be used.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "config/key_table.hpp"
#include "stagewell/units.hpp"

namespace stagewell::config_detail {

// An interval of allowed numbers, open or closed at either end, or unbounded.
struct Bounds {
  std::optional<double> low;
  std::optional<double> high;
  bool low_inclusive = true;
  bool high_inclusive = true;

  static Bounds any() { return {}; }
  static Bounds above(double low) { return {low, std::nullopt, false, true}; }
  static Bounds at_least(double low) { return {low, std::nullopt, true, true}; }
  Bounds at_most(double high) const;

  bool contains(double value) const;
  // "greater than 0 and at most 0.5"; `seconds` shows the limits as durations.
  std::string describe(bool seconds = false) const;
};

// The value as text, when it is a scalar; otherwise reports that it must be `expected` ("a
// number") and returns nullopt.
std::optional<std::string> scalar(const At& at, Context& cx, std::string_view expected);

// A finite number within `bounds`. Used directly by readers of lists of numbers.
std::optional<double> number_value(const At& at, Context& cx, const Bounds& bounds);

Read<double> number(Bounds bounds);
Read<int> whole_number(int low, int high);
Read<std::string> text();        // any non-empty text
Read<std::string> identifier();  // a site id: [A-Za-z0-9_.-]{1,64}
Read<std::string> one_of(std::vector<std::string_view> choices);
Read<units::System> unit_system();        // metric | us
Read<units::Length> length_unit();        // units::length_choices()
Read<double> duration(Bounds seconds);    // "90s", "1h30m" -> seconds
Read<double> percent(Bounds percents);    // "10%" -> 0.10 (the bounds are in percent)
Read<std::filesystem::path> file_path();  // resolved against the base dir
Read<std::string> time_zone();            // IANA name or fixed offset

}  // namespace stagewell::config_detail
