// Local calendar days as the daily tables store them: 'YYYY-MM-DD' text.
#include <fmt/format.h>

#include <charconv>

#include "stagewell/daily_rows.hpp"

namespace stagewell::daily {

std::string format_day(Day day) {
  return fmt::format("{:04d}-{:02d}-{:02d}", day.year(), day.month(), day.day());
}

std::optional<Day> parse_day(std::string_view text) {
  if (text.size() != 10 || text[4] != '-' || text[7] != '-') return std::nullopt;
  int parts[3] = {0, 0, 0};
  const std::string_view fields[3] = {text.substr(0, 4), text.substr(5, 2), text.substr(8, 2)};
  for (int i = 0; i < 3; ++i) {
    for (char c : fields[i]) {
      if (c < '0' || c > '9') return std::nullopt;
    }
    std::from_chars(fields[i].data(), fields[i].data() + fields[i].size(), parts[i]);
  }
  const Day day(parts[0], parts[1], parts[2]);
  // civil_day normalises 2026-02-30 to 2026-03-02: a real date survives unchanged.
  if (day.year() != parts[0] || day.month() != parts[1] || day.day() != parts[2]) {
    return std::nullopt;
  }
  return day;
}

}  // namespace stagewell::daily
