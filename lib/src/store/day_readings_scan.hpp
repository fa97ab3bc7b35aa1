// The application-defined aggregate behind ReadingsTable::scan_day_readings
// (day_readings_scan.cpp), registered on every connection a store opens.
#pragma once

#include "stagewell/result.hpp"
#include "store/sqlite.hpp"

namespace stagewell::store_detail {

// Registers the aggregate on `connection`. SQL that does not bind the program's own pointer to
// it (an analyst's query, a view, a trigger) cannot use it.
Result<void> add_day_readings_function(sqlite::Connection& connection);

}  // namespace stagewell::store_detail
