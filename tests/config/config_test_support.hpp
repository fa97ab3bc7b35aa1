// Helpers for the configuration tests: parse YAML written in a test and look for an error.
#pragma once

#include <doctest/doctest.h>

#include <algorithm>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/config.hpp"

namespace stagewell::test {

// YAML is written in tests as R"(<newline>...)": the newline after R"( is dropped so that the
// text's first line is line 1. Lines carry "# N" comments so that a reader can check the numbers.
inline std::string yaml_text(std::string_view text) {
  if (!text.empty() && text.front() == '\n') text.remove_prefix(1);
  return std::string(text);
}

// Seven lines that make a valid configuration of one culvert site, for tests of the top-level
// sections written after them (line 8 on).
inline constexpr std::string_view kOneSiteLines = R"(
units: metric            # 1
database: flows.db       # 2
sites:                   # 3
  - id: outlet           # 4
    section: {shape: circular, diameter: 0.9} # 5
    roughness: 0.013     # 6
    slope: 0.002         # 7
)";

// kOneSiteLines followed by `tail`, parsed as test.yaml in /srv/flows.
inline ConfigResult parse_after_one_site(std::string_view tail) {
  return parse_config(yaml_text(kOneSiteLines) + std::string(tail), "test.yaml", "/srv/flows");
}

// The errors of a configuration given as text (none when it loads).
inline std::vector<ConfigError> errors_of(std::string_view text) {
  auto result = parse_config(yaml_text(text), "test.yaml", "/srv/flows");
  if (result) return {};
  return result.error();
}

// Every error, one per line, for doctest's INFO().
inline std::string listing(const std::vector<ConfigError>& errors) {
  std::string out = errors.empty() ? "(no errors)\n" : "";
  for (const auto& error : errors) out += error.to_string() + "\n";
  return out;
}

// True when an error on `line` reads, in full ("test.yaml:7:14: key = value: message"), with
// `fragment` somewhere in it.
inline bool has_error(const std::vector<ConfigError>& errors, int line, std::string_view fragment) {
  return std::any_of(errors.begin(), errors.end(), [&](const ConfigError& error) {
    return error.line == line && error.to_string().find(fragment) != std::string::npos;
  });
}

// One bad configuration: exactly one error, on `line`, containing `fragment`.
inline void expect_one_error(std::string_view text, int line, std::string_view fragment) {
  const auto errors = errors_of(text);
  INFO(listing(errors));
  CHECK(errors.size() == 1);
  CHECK(has_error(errors, line, fragment));
}

}  // namespace stagewell::test
