// The configuration a site's readings are computed from, as canonical JSON text: stored as a
// configuration version with every reading, so that a stored result says what produced it.
#pragma once

#include <string>

#include "stagewell/config.hpp"

namespace stagewell {

std::string site_config_json(const SiteConfig& site, units::System system);

}  // namespace stagewell
