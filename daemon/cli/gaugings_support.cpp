#include "gaugings_support.hpp"

#include <iostream>

#include "stagewell/timestamp.hpp"

namespace stagewell::cli {

std::optional<OpenSite> open_site_or_report(Store& store, const Config& config,
                                            const std::string& id) {
  const SiteConfig* site = config.find_site(id);
  auto key = store.sites().ensure(id);
  if (!key) {
    std::cerr << "site " << id << ": " << key.error().message << '\n';
    return std::nullopt;
  }
  auto history = SiteHistory::open(store, *key, *site, config.units, system_now_ms());
  if (!history) {
    std::cerr << "site " << id << ": " << history.error().message << '\n';
    return std::nullopt;
  }
  return OpenSite{*key, site, std::move(*history)};
}

}  // namespace stagewell::cli
