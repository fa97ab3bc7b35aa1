// `version_depth_terms`: what turns a stored stage into its depth, per configuration version
// (schema/006_compact_readings.sql). Depth is not stored with each reading: the `discharge` view
// and the readings' reads compute it from these terms, with the program's own arithmetic.
#pragma once

#include <cstdint>
#include <string_view>

#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"
#include "store/sqlite.hpp"

namespace stagewell::store_detail {

// The depth of a reading, as SQL over `readings AS r` and `version_depth_terms AS d`: the same
// operations in the same order as SiteHistory::depth (stage + correction, + offset, - zero flow,
// × stage unit, ÷ length unit), so the value is bit for bit the one the program computes.
inline constexpr std::string_view kDepthSql =
    "((r.stage + CASE WHEN d.correction_from_ms IS NULL THEN 0.0 "
    "ELSE d.correction_offset + d.correction_drift * "
    "(CAST(r.time_ms - d.correction_from_ms AS REAL) / "
    "CAST(d.correction_to_ms - d.correction_from_ms AS REAL)) END) "
    "+ d.stage_offset - d.zero_flow) * d.stage_unit_m / d.length_unit_m";

// Writes the terms of version `config_id`, unless it has them already.
Result<void> record_depth_terms(sqlite::Connection& connection, std::int64_t config_id,
                                const DepthTerms& terms);

// Writes the terms of every version that has none (the versions recorded before migration 6).
Result<void> fill_depth_terms(sqlite::Connection& connection);

}  // namespace stagewell::store_detail
