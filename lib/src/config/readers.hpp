// The readers of each level of the configuration, one file per level: section_keys.cpp,
// site_keys.cpp, source_keys.cpp; load.cpp reads the top level and calls the others.
#pragma once

#include "config/context.hpp"
#include "config/key_table.hpp"
#include "config/value_readers.hpp"
#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// Reads `section:` into `out`. True when it read without errors (so that the roughness list can
// be counted against its subsections).
bool read_section(const At& at, Context& cx, SectionSpec& out);

// Reads `sites:` into config.sites. REQUIRES: config.units has been read.
void read_sites(const At& at, Context& cx, Config& config);

// Reads a site's `alarms:` into `out`.
void read_alarms(const At& at, Context& cx, AlarmsSpec& out);
// ---- Site keys shared by a site and its changes (site_keys.cpp) ----

// Manning's n: one number or one per subsection, into out.roughness.
void read_roughness(const At& at, Context& cx, SiteConfig& out);
// Counts out.roughness against the section's subsections, repeating a single n for all. Reports
// at `site`'s `roughness` key when it was written there.
void check_roughness_count(const At& site, Context& cx, SiteConfig& out);
// The energy slope and its bounds.
Read<double> slope_value();
// The keys of `stage:` and of `checks:`.
std::vector<Key<StageSpec>> stage_keys(units::System system);
const std::vector<Key<ChecksSpec>>& checks_keys();
// Reads `checks:` into `checks`; without defaults, keys not written keep their values (a change).
void read_checks(const At& at, Context& cx, ChecksSpec& checks, bool with_defaults);
void read_uncertainty(const At& at, Context& cx, UncertaintySpec& out, bool with_defaults);

// The same table with every defaulted key made optional: a change overrides only what it writes.
template <typename T>
std::vector<Key<T>> without_defaults(std::vector<Key<T>> keys) {
  for (auto& key : keys) {
    if (key.presence.kind == Presence::Kind::defaulted) key.presence = optional();
  }
  return keys;
}

// ---- History (history_keys.cpp) ----

// Reads a site's `changes:` on top of `site` (whose own keys are already read) into site.changes.
void read_changes(const At& at, Context& cx, units::System system, SiteConfig& site);
// Reads a site's `corrections:` into site.corrections, sorted by time; refuses overlaps.
void read_corrections(const At& at, Context& cx, SiteConfig& site);
// An RFC 3339 time with its offset ("2025-06-01T00:00:00Z", "...-06:00") -> ms since the epoch.
Read<std::int64_t> rfc3339_time();

// Reads `sources:` into config.sources. REQUIRES: config.sites has been read (a source may name
// a site).
void read_sources(const At& at, Context& cx, Config& config);

// Reads `log:` into `out`.
void read_log(const At& at, Context& cx, LogSpec& out);

}  // namespace stagewell::config_detail
