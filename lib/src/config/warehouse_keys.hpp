// The keys of `warehouse:` (config.hpp, WarehouseSpec).
#pragma once

#include "config/context.hpp"
#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// Reads `warehouse:` into config.warehouse.
void read_warehouse(const At& at, Context& cx, Config& config);

}  // namespace stagewell::config_detail
