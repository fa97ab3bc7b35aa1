// Gaugings against the configuration: the discharge each configuration version computes at a
// gauging's stage, kept current in the store (refresh), and the import of parsed gaugings
// (gauging_csv.hpp), with the stage taken from the stored readings where the sheet has none.
//
// The store keeps the gaugings (GaugingsTable); this is what decides their values. Single-threaded.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/gauging_csv.hpp"
#include "stagewell/gaugings_table.hpp"
#include "stagewell/plot.hpp"
#include "stagewell/result.hpp"
#include "stagewell/site_history.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

// The subsection holding the section's lowest point — the middle of the first stretch of bed at
// the lowest elevation; on a break, the subsection left of it: the main channel. 0 for a section
// without subsections.
std::size_t main_subsection(const SectionSpec& section);
// The main channel's Manning's n of a site's keys.
double main_roughness(const SiteConfig& keys);

// What the configuration version in force at `time_ms` makes of a gauging at `stage`: the
// discharge (empty when the stage is outside the site's checks' min_stage..max_stage:
// out_of_range), the main channel's n and the version, and the hydraulic flags of the computation
// (below_zero_flow, above_section, surcharged, supercritical, out_of_range).
struct GaugingEvaluation {
  GaugingComputed stored;
  Flags flags;
};
GaugingEvaluation evaluate_gauging(const SiteHistory& history, std::int64_t time_ms, double stage);

// Why a gauging cannot take part in a roughness fit; nullopt when it can: it has a computed
// discharge > 0, a measured one > 0, and none of the flags out_of_range, above_section,
// surcharged, below_zero_flow (supercritical flow follows Manning's equation as well).
std::optional<std::string> calibration_exclusion(const GaugingRecord& record, Flags flags);

// The stage at `time_ms` linearly interpolated between the site's stored readings around it: the
// latest at or before and the first at or after, each no further than `max_gap_ms` away (a
// reading at `time_ms` itself is taken as it is). Raw stages, site's stage units. nullopt with
// `why` set when there is no such reading on one side.
Result<std::optional<double>> interpolated_stage(Store& store, SiteKey site, std::int64_t time_ms,
                                                 std::int64_t max_gap_ms, std::string& why);

// A stored gauging with the flags of its computation.
struct EvaluatedGauging {
  GaugingRecord record;
  Flags flags;
};

// Computes every gauging of the site in [from_ms, to_ms] again with the version now in force at its
// time, writes those whose values changed (one transaction of its own), and returns them all in
// time order. REQUIRES: read-write store, no batch open; `history` opened for `site` on it.
Result<std::vector<EvaluatedGauging>> refresh_gaugings(Store& store, const SiteHistory& history,
                                                       SiteKey site, std::int64_t from_ms,
                                                       std::int64_t to_ms);

// What became of one parsed gauging.
struct GaugingImport {
  std::int64_t line_number = 0;
  std::optional<std::string> refused;  // why it was not stored; empty when stored
  bool replaced = false;               // it replaced a stored gauging of the same site and time
  bool stage_interpolated = false;
};

// Stores the site's gaugings (each replacing one of the same time), with computed values, in one
// transaction. Those without a stage get the interpolated one, or are refused when there is none.
// The largest distance to a reading is the checks' max_gap of the version in force at the
// gauging's time. `default_uncertainty` (percent) serves lines without one.
// REQUIRES: as refresh_gaugings(); every line is of the site `history` was opened for.
Result<std::vector<GaugingImport>> import_gaugings(Store& store, const SiteHistory& history,
                                                   SiteKey site, std::span<const GaugingLine> lines,
                                                   double default_uncertainty, std::int64_t now_ms);

// The rating of the version in force at `time_ms` as the rating plot draws it: `count` stages
// (>= 2) evenly from zero flow (or the checks' min_stage, when higher) to the top of the section
// (or max_stage, when lower), each with its discharge (the same computation as a reading's, the
// stage correction in force at `time_ms` included), and the ends of its uncertainty band
// (uncertainty.hpp, the site's `uncertainty`).
std::vector<plot::RatingCurvePoint> rating_curve(const SiteHistory& history, units::System system,
                                                 std::int64_t time_ms, std::size_t count);

}  // namespace stagewell
