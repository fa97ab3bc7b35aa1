// make_channel lives alone in this file: it is the config module's only use of the hydraulics
// module's sections and channels, so a program that only reads a configuration links without them.
#include <exception>

#include "stagewell/config.hpp"

namespace stagewell {

std::shared_ptr<const Channel> make_channel(const SiteConfig& site, units::System system) {
  try {
    auto section = make_section(site.section);
    // Validation checks the same conditions as make_section; a refusal here means the two
    // disagree, which the caller reports like any missing channel.
    if (!section) return nullptr;
    return std::make_shared<const Channel>(std::shared_ptr<const Section>(std::move(*section)),
                                           site.roughness, site.slope, system);
  } catch (const std::exception&) {
    return nullptr;  // exceptions do not cross the module boundary
  }
}

}  // namespace stagewell
