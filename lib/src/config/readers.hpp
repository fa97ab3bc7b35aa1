// The readers of each level of the configuration, one file per level: section_keys.cpp,
// site_keys.cpp, source_keys.cpp; load.cpp reads the top level and calls the others.
#pragma once

#include "config/context.hpp"
#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// Reads `section:` into `out`. True when it read without errors (so that the roughness list can
// be counted against its subsections).
bool read_section(const At& at, Context& cx, SectionSpec& out);

// Reads `sites:` into config.sites. REQUIRES: config.units has been read.
void read_sites(const At& at, Context& cx, Config& config);

// Reads a site's `alarms:` into `out`.
void read_alarms(const At& at, Context& cx, AlarmsSpec& out);

// Reads `sources:` into config.sources. REQUIRES: config.sites has been read (a source may name
// a site).
void read_sources(const At& at, Context& cx, Config& config);

// Reads `log:` into `out`.
void read_log(const At& at, Context& cx, LogSpec& out);

}  // namespace stagewell::config_detail
