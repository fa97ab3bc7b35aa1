// Where the configuration is found when the command line names none (config.hpp).
#include <cstdlib>

#include "stagewell/config.hpp"

namespace stagewell {

std::optional<std::string> process_environment(const char* name) {
  const char* value = std::getenv(name);
  if (value == nullptr) return std::nullopt;
  return std::string(value);
}

ConfigCandidates user_config_candidates(const EnvironmentLookup& environment) {
  ConfigCandidates out;
  if (auto named = environment("STAGEWELL_CONFIG"); named && !named->empty()) {
    out.paths.emplace_back(*named);
    out.from_variable = true;
    return out;
  }
  // XDG Base Directory Specification: "If $XDG_CONFIG_HOME is either not set or empty, a default
  // equal to $HOME/.config should be used"; a relative path in it is invalid and ignored.
  std::filesystem::path base;
  if (auto xdg = environment("XDG_CONFIG_HOME"); xdg && !xdg->empty() && xdg->front() == '/') {
    base = *xdg;
  } else if (auto home = environment("HOME"); home && !home->empty()) {
    base = std::filesystem::path(*home) / ".config";
  }
  if (!base.empty()) out.paths.push_back(base / "stagewell" / "config.yaml");
  out.paths.emplace_back(kSystemConfigFile);
  return out;
}

}  // namespace stagewell
