// Which time zone names a configuration accepts.
#pragma once

#include <string_view>

namespace stagewell::config_detail {

// True for a fixed offset (see fixed_utc_offset_s in config.hpp) or a zone of the IANA database
// installed on this machine ("America/Denver", "UTC"). Paths and cctz's special "localtime" are
// not names: a configuration says which zone it means.
bool is_time_zone(std::string_view name);

}  // namespace stagewell::config_detail
