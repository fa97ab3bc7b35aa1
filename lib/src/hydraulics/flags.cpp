#include "stagewell/flags.hpp"

#include <array>

namespace stagewell {
namespace {

struct FlagName {
  Flag flag;
  std::string_view name;
};

constexpr std::array<FlagName, 11> kFlagNames{{
    {Flag::below_zero_flow, "below_zero_flow"},
    {Flag::above_section, "above_section"},
    {Flag::surcharged, "surcharged"},
    {Flag::supercritical, "supercritical"},
    {Flag::out_of_range, "out_of_range"},
    {Flag::spike, "spike"},
    {Flag::unsteady, "unsteady"},
    {Flag::flatline, "flatline"},
    {Flag::gap, "gap"},
    {Flag::late, "late"},
    {Flag::future, "future"},
}};

}  // namespace

std::string_view name(Flag flag) {
  for (const auto& entry : kFlagNames) {
    if (entry.flag == flag) return entry.name;
  }
  return "unknown";
}

std::optional<Flag> parse_flag(std::string_view text) {
  for (const auto& entry : kFlagNames) {
    if (entry.name == text) return entry.flag;
  }
  return std::nullopt;
}

const std::vector<Flag>& all_flags() {
  static const std::vector<Flag> flags = [] {
    std::vector<Flag> out;
    for (const auto& entry : kFlagNames) out.push_back(entry.flag);
    return out;
  }();
  return flags;
}

std::vector<std::string_view> Flags::names() const {
  std::vector<std::string_view> out;
  for (const auto& entry : kFlagNames) {
    if (has(entry.flag)) out.push_back(entry.name);
  }
  return out;
}

std::string Flags::joined(char separator) const {
  std::string out;
  for (const auto name : names()) {
    if (!out.empty()) out += separator;
    out += name;
  }
  return out;
}

}  // namespace stagewell
