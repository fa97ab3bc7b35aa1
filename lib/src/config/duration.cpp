#include <array>
#include <charconv>
#include <cmath>

#include "stagewell/config.hpp"

namespace stagewell {
namespace {

struct DurationUnit {
  char symbol;
  double seconds;
};

// Largest first: a duration names each unit at most once, in this order ("1h30m", not "30m1h"),
// so that a slip such as "1m30h" is caught rather than read as 30 h 1 min.
constexpr std::array<DurationUnit, 4> kUnits{
    {{'d', 86400.0}, {'h', 3600.0}, {'m', 60.0}, {'s', 1.0}}};

}  // namespace

std::optional<double> parse_duration(std::string_view text) {
  if (text == "0") return 0.0;  // zero needs no unit
  if (text.empty()) return std::nullopt;
  double total_s = 0.0;
  std::size_t next_unit = 0;  // index into kUnits of the largest unit still allowed
  while (!text.empty()) {
    // A plain decimal number: digits, optionally a fraction. No sign: durations are not negative.
    std::size_t length = 0;
    while (length < text.size() &&
           ((text[length] >= '0' && text[length] <= '9') || text[length] == '.')) {
      ++length;
    }
    if (length == 0 || length == text.size()) return std::nullopt;  // no number, or no unit
    double amount = 0.0;
    const auto [end, ec] =
        std::from_chars(text.data(), text.data() + length, amount, std::chars_format::fixed);
    if (ec != std::errc() || end != text.data() + length) return std::nullopt;
    const char symbol = text[length];
    std::size_t unit = next_unit;
    while (unit < kUnits.size() && kUnits[unit].symbol != symbol) ++unit;
    if (unit == kUnits.size()) return std::nullopt;  // unknown unit, or out of order
    total_s += amount * kUnits[unit].seconds;
    next_unit = unit + 1;
    text.remove_prefix(length + 1);
  }
  if (!std::isfinite(total_s)) return std::nullopt;
  return total_s;
}

}  // namespace stagewell
