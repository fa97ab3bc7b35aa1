// The configuration a site's readings are computed from, as canonical JSON text: stored as a
// configuration version with every reading, so that a stored result says what produced it.
#pragma once

#include <string>

#include "stagewell/config.hpp"

namespace stagewell {

std::string site_config_json(const SiteConfig& site, units::System system);

// The same with the stage correction in force added under "correction" (from_ms, to_ms, offset,
// drift): a reading's version then explains its correction too. Without one (nullptr) the text
// is exactly site_config_json's, so versions recorded before corrections existed stay the same.
std::string site_config_json(const SiteConfig& site, units::System system,
                             const StageCorrection* correction);

}  // namespace stagewell
