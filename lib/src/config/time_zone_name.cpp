#include "config/time_zone_name.hpp"

#include <cctz/time_zone.h>

#include <algorithm>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell {
namespace {

std::optional<int> two_digits(std::string_view text) {
  if (text.size() != 2 || text[0] < '0' || text[0] > '9' || text[1] < '0' || text[1] > '9') {
    return std::nullopt;
  }
  return (text[0] - '0') * 10 + (text[1] - '0');
}

// UTC offsets in use run from -12:00 to +14:00 (IANA tz database, from memory: Etc/GMT+12 and
// Pacific/Kiritimati).
constexpr int kWestmost_s = -12 * 3600;
constexpr int kEastmost_s = 14 * 3600;

}  // namespace

std::optional<int> fixed_utc_offset_s(std::string_view zone) {
  if (zone == "Z") return 0;
  if (zone.size() != 6 || (zone[0] != '+' && zone[0] != '-') || zone[3] != ':') {
    return std::nullopt;
  }
  const auto hours = two_digits(zone.substr(1, 2));
  const auto minutes = two_digits(zone.substr(4, 2));
  if (!hours || !minutes || *minutes >= 60) return std::nullopt;
  const int offset_s = (zone[0] == '-' ? -1 : 1) * (*hours * 3600 + *minutes * 60);
  if (offset_s < kWestmost_s || offset_s > kEastmost_s) return std::nullopt;
  return offset_s;
}

namespace config_detail {

bool is_time_zone(std::string_view name) {
  if (fixed_utc_offset_s(name)) return true;
  // cctz would also open any file path ("/etc/localtime", "../x") and the name "localtime".
  const bool plain =
      !name.empty() && name.front() != '/' && name.find("..") == std::string_view::npos &&
      name != "localtime" && std::all_of(name.begin(), name.end(), [](char c) {
        return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') ||
               c == '/' || c == '_' || c == '-' || c == '+';
      });
  if (!plain) return false;
  cctz::time_zone zone;
  return cctz::load_time_zone(std::string(name), &zone);  // false for names it does not know
}

}  // namespace config_detail
}  // namespace stagewell
