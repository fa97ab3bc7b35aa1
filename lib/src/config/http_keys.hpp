// The keys of `http:` (config.hpp, HttpSpec).
#pragma once

#include "config/context.hpp"
#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// Reads `http:` into config.http (set even when the map is empty: `http: {}` turns the server on
// with every default).
void read_http(const At& at, Context& cx, Config& config);

}  // namespace stagewell::config_detail
