// Field measurements of discharge ("gaugings", schema/009_uncertainty_and_gaugings.sql): one per
// site and time, imported by `stagewell gaugings import`, each with the discharge the
// configuration version in force at its time computes at its stage (refreshed whenever that
// version changes: gaugings.hpp).
//
// A thin handle on its store's connection (Store::gaugings()): reads see the writes of the batch
// open on that store.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

// One row of `gauging_records`.
struct GaugingRecord {
  SiteKey site;
  std::int64_t time_ms = 0;         // ms since the Unix epoch, UTC
  double stage = 0.0;               // site's stage units: as measured, or interpolated
  bool stage_interpolated = false;  // taken from the stored readings around time_ms
  double measured = 0.0;            // m^3/s or ft^3/s (the configuration's unit system)
  double uncertainty = 0.0;         // percent of `measured`, the measurement's own
  std::optional<std::string> method;
  std::optional<std::string> note;
  std::optional<double> computed;   // m^3/s or ft^3/s; empty when the stage gives none
  std::optional<double> roughness;  // the main channel's Manning's n of version `config`
  std::optional<ConfigVersionId> config;
  std::int64_t imported_ms = 0;
};

// What computed a gauging's stored values (GaugingsTable::set_computed).
struct GaugingComputed {
  std::optional<double> computed;   // m^3/s or ft^3/s
  std::optional<double> roughness;  // main channel's Manning's n
  std::optional<ConfigVersionId> config;
  friend bool operator==(const GaugingComputed&, const GaugingComputed&) = default;
};

// One row of the `gaugings` view (its public columns), as `stagewell gaugings list` shows it.
struct GaugingViewRow {
  std::int64_t time_ms = 0;
  double stage = 0.0;                        // site's stage units
  double measured = 0.0;                     // m^3/s or ft^3/s
  std::optional<double> computed;            // m^3/s or ft^3/s
  std::optional<double> difference_percent;  // 100 (measured - computed) / computed
  std::optional<double> implied_roughness;   // main channel's n making computed equal measured
  std::optional<std::string> method;
  std::optional<std::string> note;
  std::optional<std::string> version;  // config_versions.hash
};

class GaugingsTable : store_detail::TableHandle {
 public:
  // Stores a gauging, replacing the one of the same site and time (an import made again).
  // REQUIRES: `batch` is open on this table's store; stage and measured finite.
  Result<void> put(WriteBatch& batch, const GaugingRecord& record);
  // Sets the computed discharge, roughness and version of the gauging of `site` at `time_ms`.
  // REQUIRES: as put().
  Result<void> set_computed(WriteBatch& batch, SiteKey site, std::int64_t time_ms,
                            const GaugingComputed& computed);
  // The site's gaugings in [from_ms, to_ms], in time order.
  Result<std::vector<GaugingRecord>> range(SiteKey site, std::int64_t from_ms, std::int64_t to_ms);
  // The site's rows of the `gaugings` view in [from_ms, to_ms], in time order.
  Result<std::vector<GaugingViewRow>> view(SiteKey site, std::int64_t from_ms, std::int64_t to_ms);

 private:
  using TableHandle::TableHandle;
};

}  // namespace stagewell
