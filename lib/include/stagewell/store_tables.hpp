// The store's small tables: sites, configuration versions, ingest progress and the record of
// recomputations. Each class is a thin handle on its store's connection (Store::sites() etc.).
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

// `sites`: the key every other table uses for a site id.
// What the site_details view shows of a configured site (schema/008): units as UCUM codes.
struct SiteSettings {
  SiteKey site;
  std::string name;
  std::string time_zone;
  std::string stage_unit;
  std::string length_unit;
  std::string discharge_unit;
  std::string volume_unit;
  std::optional<double> latitude;
  std::optional<double> longitude;
  std::optional<std::string> datum;
};

class SitesTable : store_detail::TableHandle {
 public:
  // Replaces every site's settings with `sites` (those of the configuration in force), in a
  // transaction of its own. REQUIRES: read-write; no batch open.
  Result<void> describe(const std::vector<SiteSettings>& sites);
  // The key of site `id`, added on first use, in a transaction of its own.
  // REQUIRES: read-write; no batch open (a key added inside a batch that rolls back would vanish).
  Result<SiteKey> ensure(std::string_view id);
  // The key of site `id`; nullopt when the database has never seen it.
  Result<std::optional<SiteKey>> find(std::string_view id);

 private:
  using TableHandle::TableHandle;
};

// `config_versions`: what computed each stored reading.
class VersionsTable : store_detail::TableHandle {
 public:
  // Records the site's configuration (JSON text) and how it turns stage into depth, in a
  // transaction of its own. The same text for the same site returns the same id (and keeps its
  // first terms); a new text returns a new one. `now_ms` becomes its created time when it is new.
  // The default terms make depth the stage itself (metres, no offset). REQUIRES: read-write; no
  // batch open.
  Result<ConfigVersionId> record(SiteKey site, std::string_view json, std::int64_t now_ms,
                                 const DepthTerms& depth = DepthTerms{});
  // The version's short name (config_versions.hash); nullopt for an unknown id.
  Result<std::optional<std::string>> hash(ConfigVersionId version);

 private:
  using TableHandle::TableHandle;
};

// `ingest_progress`: how far each source has been read (written by WriteBatch::set_progress).
class ProgressTable : store_detail::TableHandle {
 public:
  // How far `source` has been read; empty when it never was.
  Result<std::optional<IngestProgress>> committed(std::string_view source);
  // The `max_rows` sources written most recently, newest first.
  Result<std::vector<SourceProgress>> latest(std::size_t max_rows);

 private:
  using TableHandle::TableHandle;
};

// One row of `recomputation_runs` (schema/004_history.sql, renamed by 005, `finished_ms` from 007):
// one recomputation of one site, which may have been carried on by later runs after being stopped.
struct RecomputationRun {
  SiteKey site;
  std::int64_t at_ms = 0;           // when it started
  std::int64_t period_from_ms = 0;  // first reading recomputed
  std::int64_t period_to_ms = 0;    // last reading recomputed, included
  std::string config_before;        // version hashes, comma-separated, in time order of first use
  std::string config_after;
  std::int64_t readings_changed = 0;
  double max_discharge_change = 0.0;     // m^3/s or ft^3/s
  double max_daily_volume_change = 0.0;  // m^3 or ft^3
  std::optional<std::int64_t> finished_ms;  // when its last step committed; empty until then
};

class RecomputationRunsTable : store_detail::TableHandle {
 public:
  // Adds a run; returns its id. REQUIRES: `batch` is open on this table's store.
  Result<std::int64_t> add(WriteBatch& batch, const RecomputationRun& run);
  // Brings run `id` up to date (its site and start stay). REQUIRES: as add().
  Result<void> update(WriteBatch& batch, std::int64_t id, const RecomputationRun& run);
  // The site's latest run not marked finished (stopped part-way), with its id; nullopt if none.
  Result<std::optional<std::pair<std::int64_t, RecomputationRun>>> unfinished(SiteKey site);

 private:
  using TableHandle::TableHandle;
};

}  // namespace stagewell
