#include "command.hpp"

#include <iostream>

namespace stagewell::cli {

CLI::Option* add_config_option(CLI::App& command, std::string& path) {
  return command.add_option("-c,--config", path, "Configuration file (YAML)")
      ->required()
      ->check(CLI::ExistingFile);
}

std::optional<Config> load_config_or_report(const std::string& path) {
  auto config = load_config(path);
  if (config) return std::move(*config);
  for (const auto& error : config.error()) std::cerr << error.to_string() << '\n';
  std::cerr << path << ": " << config.error().size()
            << (config.error().size() == 1 ? " error" : " errors") << ", nothing done\n";
  return std::nullopt;
}

const SiteConfig* find_site_or_report(const Config& config, const std::string& site_id) {
  if (const auto* site = config.find_site(site_id)) return site;
  std::string known;
  for (const auto& site : config.sites) known += (known.empty() ? "" : ", ") + site.id;
  std::cerr << "unknown site '" << site_id << "'; the configuration has: " << known << '\n';
  return nullptr;
}

}  // namespace stagewell::cli
