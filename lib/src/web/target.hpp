// A request target ("/api/sites/x/readings?from=...") taken apart: path segments and query
// parameters, percent-decoded. Refuses what could be read two ways: encoded slashes and
// backslashes, "." and ".." segments, control characters, bad percent escapes, a parameter given
// twice.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell::web_detail {

struct Target {
  std::vector<std::string> segments;  // "/api/sites" -> {"api", "sites"}; "/" -> {}
  std::vector<std::pair<std::string, std::string>> query;

  // The value of parameter `name`, when given (never twice: parse_target refuses that).
  std::optional<std::string> param(std::string_view name) const;
};

// Fails (invalid_argument, a sentence for the client) on a target this server will not read.
Result<Target> parse_target(std::string_view target);

}  // namespace stagewell::web_detail
