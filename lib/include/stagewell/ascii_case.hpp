// Comparing names typed by people (CSV headers, unit spellings) without regard to ASCII case.
// Only A-Z fold: every name compared this way is ASCII, and bytes beyond it compare as they are.
#pragma once

#include <string_view>

namespace stagewell {

inline bool equal_ignoring_case(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  const auto lower = [](char c) { return c >= 'A' && c <= 'Z' ? static_cast<char>(c + 32) : c; };
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (lower(a[i]) != lower(b[i])) return false;
  }
  return true;
}

}  // namespace stagewell
