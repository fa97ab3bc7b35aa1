// What `stagewell gaugings` and `stagewell calibrate` share: the database of a configuration and
// a site's history on it, opened with every error reported.
#pragma once

#include <optional>
#include <string>

#include "stagewell/config.hpp"
#include "stagewell/site_history.hpp"
#include "stagewell/store.hpp"

namespace stagewell::cli {

struct OpenSite {
  SiteKey key;
  const SiteConfig* config = nullptr;
  SiteHistory history;
};
// Site `id`'s key and history on `store`; nullopt after printing why.
// REQUIRES: `config` outlives the result; `id` is configured.
std::optional<OpenSite> open_site_or_report(Store& store, const Config& config,
                                            const std::string& id);

}  // namespace stagewell::cli
