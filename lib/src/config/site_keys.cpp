// A site: its id and name, its section (section_keys.cpp), roughness, slope, how its stage
// readings are turned into depth, the checks on each reading and its alarms (alarm_keys.cpp).
#include <fmt/format.h>

#include <map>

#include "config/key_table.hpp"
#include "config/readers.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

// Manning's n. V. T. Chow, "Open-Channel Hydraulics" (1959), table 5-6 spans about 0.010 to 0.15
// for channels (from memory; a few of its entries for very smooth surfaces and for dense brush on
// floodplains lie beyond). The band 0.008 to 0.25 is wider so that no real channel is refused,
// while an n typed in the wrong form (1.4 for 0.014, or 0) is caught. Common practice.
const Bounds kRoughness = Bounds::at_least(kMinRoughness).at_most(kMaxRoughness);

// Energy slope, length per length. Manning's equation and its tables of n are for gentle slopes
// (sin θ ≈ tan θ); past 0.5 (a 1 in 2 grade, 27°) the value is surely a slip — a percentage
// written without its % (1.5 meaning 1.5 %), or a drop in metres per kilometre. Common practice.
const Bounds kSlope = Bounds::above(0.0).at_most(0.5);

}  // namespace

Read<double> slope_value() { return number(kSlope); }

// Manning's n: one number, or a list with one per subsection. Counted against the section after
// the whole site is read (check_roughness_count).
void read_roughness(const At& at, Context& cx, SiteConfig& out) {
  std::vector<double> values;
  if (at.node.IsSequence()) {
    if (at.node.size() == 0) {
      cx.error(at, "must be Manning's n: a number, or a list of one per subsection");
      return;
    }
    bool readable = true;
    for (std::size_t i = 0; i < at.node.size(); ++i) {
      const auto n = number_value(element(at, i), cx, kRoughness);
      if (n) values.push_back(*n);
      readable = readable && n.has_value();
    }
    if (!readable) return;
  } else if (const auto n = number_value(at, cx, kRoughness)) {
    values.push_back(*n);
  } else {
    return;
  }
  out.roughness = std::move(values);
}

// One n per subsection: breaks + 1 for a surveyed section, else 1. A single n serves them all.
void check_roughness_count(const At& site, Context& cx, SiteConfig& out) {
  const auto at = find(site, "roughness");
  if (!at || out.roughness.empty()) return;
  const std::size_t subsections =
      out.section.shape == Shape::surveyed ? out.section.breaks.size() + 1 : 1;
  if (out.roughness.size() == subsections) return;
  if (out.roughness.size() == 1) {
    out.roughness.assign(subsections, out.roughness.front());
    return;
  }
  if (subsections > 1) {
    cx.error(*at, fmt::format("needs {} values, one per subsection ({} breaks + 1), or a single "
                              "number for all; got {}",
                              subsections, out.section.breaks.size(), out.roughness.size()));
  } else {
    cx.error(*at, fmt::format("a section without breaks has one roughness: write a single "
                              "number; got {} values",
                              out.roughness.size()));
  }
  out.roughness.clear();
}

std::vector<Key<StageSpec>> stage_keys(units::System system) {
  // Offset and zero flow are in the stage units: the numbers the logger writes.
  return {
      {"units", defaults(system == units::System::metric ? "m" : "ft"),
       into(length_unit(), &StageSpec::units)},
      {"offset", defaults("0"), into(number(Bounds::any()), &StageSpec::offset)},
      {"zero_flow", defaults("0"), into(number(Bounds::any()), &StageSpec::zero_flow)},
  };
}

const std::vector<Key<ChecksSpec>>& checks_keys() {
  // Stage thresholds in stage units; durations in seconds once read. The defaults are those of
  // ChecksSpec in config.hpp, written as a user would write them.
  static const std::vector<Key<ChecksSpec>> keys{
      {"min_stage", optional(), into(number(Bounds::any()), &ChecksSpec::min_stage)},
      {"max_stage", optional(), into(number(Bounds::any()), &ChecksSpec::max_stage)},
      {"spike", optional(), into(number(Bounds::above(0.0)), &ChecksSpec::spike)},
      {"spike_window", defaults("3"), into(whole_number(1, 100), &ChecksSpec::spike_window)},
      {"max_rate", optional(), into(number(Bounds::above(0.0)), &ChecksSpec::max_rate)},
      {"flatline", defaults("6h"), into(duration(Bounds::at_least(0.0)), &ChecksSpec::flatline_s)},
      {"max_gap", defaults("1h"), into(duration(Bounds::above(0.0)), &ChecksSpec::max_gap_s)},
      {"max_clock_skew", defaults("5m"),
       into(duration(Bounds::at_least(0.0)), &ChecksSpec::max_clock_skew_s)},
      {"unsteady", defaults("5%"),
       into(percent(Bounds::at_least(0.0).at_most(100.0)), &ChecksSpec::unsteady)},
  };
  return keys;
}

void read_checks(const At& at, Context& cx, ChecksSpec& checks, bool with_defaults) {
  read_map(at, with_defaults ? checks_keys() : without_defaults(checks_keys()), cx, checks);
  if (checks.min_stage && checks.max_stage && *checks.min_stage >= *checks.max_stage) {
    if (const auto max_stage = find(at, "max_stage")) {
      cx.error(*max_stage, fmt::format("must be greater than min_stage ({})", *checks.min_stage));
    } else if (const auto min_stage = find(at, "min_stage")) {  // a change that wrote only this
      cx.error(*min_stage, fmt::format("must be less than max_stage ({})", *checks.max_stage));
    }
  }
}

namespace {

// Standard uncertainties (docs/uncertainty.md). The defaults are those of UncertaintySpec.
// Manning's n is rarely known better than 5 % or worse than about 50 %, and a slope is a
// measured quantity of the same order; beyond 100 % a first-order propagation means nothing.
const std::vector<Key<UncertaintySpec>>& uncertainty_keys() {
  static const std::vector<Key<UncertaintySpec>> keys{
      {"roughness", defaults("10%"),
       into(percent(Bounds::at_least(0.0).at_most(100.0)), &UncertaintySpec::roughness)},
      {"slope", defaults("10%"),
       into(percent(Bounds::at_least(0.0).at_most(100.0)), &UncertaintySpec::slope)},
      {"stage", defaults("0.005"), into(number(Bounds::at_least(0.0)), &UncertaintySpec::stage)},
  };
  return keys;
}

}  // namespace

void read_uncertainty(const At& at, Context& cx, UncertaintySpec& out, bool with_defaults) {
  read_map(at, with_defaults ? uncertainty_keys() : without_defaults(uncertainty_keys()), cx, out);
}

namespace {

const std::vector<Key<SiteLocation>>& location_keys() {
  static const std::vector<Key<SiteLocation>> keys{
      {"latitude", required(),
       into(number(Bounds::at_least(-90.0).at_most(90.0)), &SiteLocation::latitude)},
      {"longitude", required(),
       into(number(Bounds::at_least(-180.0).at_most(180.0)), &SiteLocation::longitude)},
  };
  return keys;
}

SiteConfig read_site(const At& at, Context& cx, units::System system) {
  SiteConfig site;
  bool section_ok = false;
  std::optional<At> changes;
  std::optional<At> corrections;
  const std::vector<Key<SiteConfig>> keys{
      {"id", required(), into(identifier(), &SiteConfig::id)},
      {"name", optional(), into(text(), &SiteConfig::name)},
      {"section", required(),
       [&section_ok](const At& value, Context& c, SiteConfig& s) {
         section_ok = read_section(value, c, s.section);
       }},
      {"roughness", required(), read_roughness},
      {"slope", required(), into(number(kSlope), &SiteConfig::slope)},
      {"stage", defaults("{}"),
       [system](const At& value, Context& c, SiteConfig& s) {
         read_map(value, stage_keys(system), c, s.stage);
       }},
      {"checks", defaults("{}"),
       [](const At& value, Context& c, SiteConfig& s) { read_checks(value, c, s.checks, true); }},
      {"uncertainty", defaults("{}"),
       [](const At& value, Context& c, SiteConfig& s) {
         read_uncertainty(value, c, s.uncertainty, true);
       }},
      {"alarms", defaults("{}"),
       [](const At& value, Context& c, SiteConfig& s) { read_alarms(value, c, s.alarms); }},
      {"location", optional(),
       [](const At& value, Context& c, SiteConfig& s) {
         SiteLocation location;
         const std::size_t errors = c.error_count();
         read_map(value, location_keys(), c, location);
         if (c.error_count() == errors) s.location = location;
       }},
      {"datum", optional(), into(text(), &SiteConfig::datum)},
      // History (history_keys.cpp), read once the keys above are resolved.
      {"changes", optional(),
       [&changes](const At& value, Context&, SiteConfig&) { changes = value; }},
      {"corrections", optional(),
       [&corrections](const At& value, Context&, SiteConfig&) { corrections = value; }},
  };
  read_map(at, keys, cx, site);
  if (section_ok) check_roughness_count(at, cx, site);
  if (changes) read_changes(*changes, cx, system, site);
  if (corrections) read_corrections(*corrections, cx, site);
  if (site.name.empty()) site.name = site.id;
  site.line = line_of(at.mark);
  return site;
}

}  // namespace

void read_sites(const At& at, Context& cx, Config& config) {
  if (!at.node.IsSequence() && !at.node.IsNull()) {
    cx.error(at, "must be a list of sites, each starting with `- id:`");
    return;
  }
  if (at.node.IsNull() || at.node.size() == 0) {
    cx.error(at, "needs at least one site");
    return;
  }
  std::map<std::string, int, std::less<>> first_line;
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At entry = element(at, i);
    SiteConfig site = read_site(entry, cx, config.units);
    if (site.id.empty()) continue;  // reported already
    if (const auto seen = first_line.find(site.id); seen != first_line.end()) {
      if (const auto id = find(entry, "id")) {
        cx.error(*id, fmt::format("duplicate site id (first used on line {})", seen->second));
      }
      continue;
    }
    const auto id = find(entry, "id");
    first_line.emplace(site.id, line_of(id ? id->mark : entry.mark));
    config.sites.push_back(std::move(site));
  }
}

}  // namespace stagewell::config_detail
