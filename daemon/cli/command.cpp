#include "command.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <filesystem>
#include <iostream>

#include "stagewell/timestamp.hpp"

namespace stagewell::cli {

CLI::Option* add_config_option(CLI::App& command, std::string& path) {
  return command
      .add_option("-c,--config", path,
                  "Configuration file (YAML). Default: $STAGEWELL_CONFIG, else the first of "
                  "$XDG_CONFIG_HOME/stagewell/config.yaml and " +
                      std::string(kSystemConfigFile) + " that exists")
      ->check(CLI::ExistingFile);
}

std::optional<std::string> find_config_or_report(const EnvironmentLookup& environment) {
  const auto candidates = user_config_candidates(environment);
  std::error_code ignored;
  if (candidates.from_variable) {
    if (std::filesystem::is_regular_file(candidates.paths.front(), ignored)) {
      return candidates.paths.front().string();
    }
    std::cerr << "STAGEWELL_CONFIG names " << candidates.paths.front().string()
              << ", which is not a file\n";
    return std::nullopt;
  }
  for (const auto& path : candidates.paths) {
    if (std::filesystem::is_regular_file(path, ignored)) return path.string();
  }
  std::cerr << "no configuration: give --config FILE or set STAGEWELL_CONFIG (looked for";
  for (const auto& path : candidates.paths) std::cerr << ' ' << path.string();
  std::cerr << ")\n";
  return std::nullopt;
}

std::optional<Store> open_store_or_report(const Config& config) {
  auto store = Store::open(config.database);
  if (!store) {
    std::cerr << "cannot open the database " << config.database.string() << ": "
              << store.error().message << '\n';
    return std::nullopt;
  }
  return std::move(*store);
}

std::optional<Config> load_config_or_report(const std::string& given) {
  std::string path = given;
  if (path.empty()) {
    auto found = find_config_or_report(process_environment);
    if (!found) return std::nullopt;
    path = std::move(*found);
  }
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

std::optional<std::int64_t> parse_time_option(const std::string& text, std::string_view name,
                                              std::int64_t absent) {
  if (text.empty()) return absent;
  auto parsed = parse_timestamp(text, nullptr);
  if (!parsed) {
    std::cerr << fmt::format(
        "{} {}: {} (write RFC 3339 with an offset, e.g. "
        "2025-06-01T00:00:00Z)\n",
        name, text, parsed.error().message);
    return std::nullopt;
  }
  return *parsed;
}

CLI::Validator decimal_number() {
  return CLI::Validator(
      [](std::string& text) -> std::string {
        const auto is_number = [](const std::string& t) {
          if (t.empty()) return false;
          char* end = nullptr;
          errno = 0;
          std::strtod(t.c_str(), &end);  // the "C" locale: the program never sets another
          return end == t.c_str() + t.size() && errno != ERANGE;
        };
        if (is_number(text)) return {};
        std::string dotted = text;
        std::replace(dotted.begin(), dotted.end(), ',', '.');
        if (dotted != text && is_number(dotted)) {
          return fmt::format("'{}' has a decimal comma: write the decimal point as '.' ({})",
                             text, dotted);
        }
        return fmt::format("'{}' is not a number", text);
      },
      "");
}

}  // namespace stagewell::cli
