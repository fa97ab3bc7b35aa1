// The names of the alarm kinds: the `kind` column of alarm_events and of the `alarms` view.
#include <array>

#include "stagewell/alarm_rows.hpp"

namespace stagewell::alarms {
namespace {

constexpr std::array<std::string_view, 4> kNames{"low_flow", "high_flow", "stale", "rising"};

}  // namespace

std::string_view name(AlarmKind kind) { return kNames[static_cast<std::size_t>(kind)]; }

std::optional<AlarmKind> parse_kind(std::string_view text) {
  for (std::size_t i = 0; i < kNames.size(); ++i) {
    if (kNames[i] == text) return static_cast<AlarmKind>(i);
  }
  return std::nullopt;
}

}  // namespace stagewell::alarms
