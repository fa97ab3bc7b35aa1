// A site's history: `changes:` (keys that take other values from a time on) and `corrections:`
// (stage added over a period). A change is read with the same key readers as the site itself, so
// a value a site would refuse is refused in a change, with its line.
#include <cctz/time_zone.h>
#include <fmt/format.h>

#include <algorithm>
#include <chrono>

#include "config/readers.hpp"

namespace stagewell::config_detail {
namespace {

std::size_t subsections(const SectionSpec& section) {
  return section.shape == Shape::surveyed ? section.breaks.size() + 1 : 1;
}

// What one change wrote, beyond the values themselves.
struct ChangeReading {
  std::optional<At> from;
  std::optional<At> section;
  bool section_ok = true;
  bool roughness_written = false;
};

// A change that sets a section with a different number of subsections must say which n each
// has, unless one n served them all.
void check_change_roughness(const At& entry, const ChangeReading& read, Context& cx,
                            SiteConfig& site) {
  if (!read.section_ok || (!read.section && !read.roughness_written)) return;
  auto& roughness = site.roughness;
  if (!read.roughness_written && !roughness.empty() &&
      std::all_of(roughness.begin(), roughness.end(),
                  [&](double n) { return n == roughness.front(); })) {
    roughness.assign(1, roughness.front());  // one n carried over serves any section
  }
  check_roughness_count(entry, cx, site);
  if (!read.roughness_written && read.section && roughness.size() != subsections(site.section)) {
    cx.error(*read.section,
             fmt::format("has {} subsections, but the roughness in force before this change has {} "
                         "values: write `roughness` in this change too",
                         subsections(site.section), roughness.size()));
  }
}

std::string time_text(const std::optional<At>& at) { return at ? written(at->node) : ""; }

}  // namespace

Read<std::int64_t> rfc3339_time() {
  return [](const At& at, Context& cx) -> std::optional<std::int64_t> {
    const auto value = scalar(at, cx, "a time");
    if (!value) return std::nullopt;
    std::string text = *value;
    // RFC 3339 writes UTC as Z; cctz's %Ez reads only numeric offsets.
    if (!text.empty() && (text.back() == 'Z' || text.back() == 'z')) {
      text.back() = '+';
      text += "00:00";
    }
    if (text.size() > 10 && text[10] == 't') text[10] = 'T';
    cctz::time_point<std::chrono::milliseconds> time;
    if (!cctz::parse("%Y-%m-%dT%H:%M:%E*S%Ez", text, cctz::utc_time_zone(), &time)) {
      cx.error(at,
               "must be an RFC 3339 time with its offset, e.g. 2025-06-01T00:00:00Z or "
               "2025-09-15T08:00:00-06:00");
      return std::nullopt;
    }
    return time.time_since_epoch().count();
  };
}

void read_changes(const At& at, Context& cx, units::System system, SiteConfig& site) {
  if (!at.node.IsSequence()) {
    cx.error(at, "must be a list of changes, each starting with `- from:`");
    return;
  }
  std::vector<SiteChange> changes;
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At entry = element(at, i);
    SiteChange change;
    change.site = changes.empty() ? site : changes.back().site;  // on top of the one before
    change.site.changes.clear();
    change.site.corrections.clear();
    change.line = line_of(entry.mark);
    ChangeReading read;
    bool has_time = false;
    const std::vector<Key<SiteChange>> keys{
        {"from", required(),
         [&](const At& value, Context& c, SiteChange& out) {
           read.from = value;
           if (const auto time = rfc3339_time()(value, c)) {
             out.from_ms = *time;
             has_time = true;
           }
         }},
        {"section", optional(),
         [&](const At& value, Context& c, SiteChange& out) {
           read.section = value;
           SectionSpec section;
           read.section_ok = read_section(value, c, section);
           if (read.section_ok) out.site.section = std::move(section);
         }},
        {"roughness", optional(),
         [&](const At& value, Context& c, SiteChange& out) {
           read.roughness_written = true;
           read_roughness(value, c, out.site);
         }},
        {"slope", optional(),
         [](const At& value, Context& c, SiteChange& out) {
           if (const auto slope = slope_value()(value, c)) out.site.slope = *slope;
         }},
        {"stage", optional(),
         [system](const At& value, Context& c, SiteChange& out) {
           read_map(value, without_defaults(stage_keys(system)), c, out.site.stage);
         }},
        {"checks", optional(),
         [](const At& value, Context& c, SiteChange& out) {
           read_checks(value, c, out.site.checks, false);
         }},
        {"uncertainty", optional(),
         [](const At& value, Context& c, SiteChange& out) {
           read_uncertainty(value, c, out.site.uncertainty, false);
         }},
    };
    const std::size_t before = cx.error_count();
    read_map(entry, keys, cx, change);
    if (entry.node.IsMap() && entry.node.size() == 1 && read.from) {
      cx.error(entry,
               "a change needs at least one key besides `from`: section, roughness, "
               "slope, stage, checks or uncertainty");
    }
    check_change_roughness(entry, read, cx, change.site);
    if (has_time && !changes.empty() && change.from_ms <= changes.back().from_ms) {
      cx.error(*read.from, fmt::format("changes must be in time order: this one is not after the "
                                       "change on line {}",
                                       changes.back().line));
      continue;
    }
    if (cx.error_count() == before) changes.push_back(std::move(change));
  }
  site.changes = std::move(changes);
}

void read_corrections(const At& at, Context& cx, SiteConfig& site) {
  if (!at.node.IsSequence()) {
    cx.error(at, "must be a list of corrections, each starting with `- from:`");
    return;
  }
  struct Written {
    StageCorrection correction;
    std::optional<At> from;
    std::optional<At> to;
  };
  std::vector<Written> corrections;
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At entry = element(at, i);
    Written out;
    out.correction.line = line_of(entry.mark);
    bool has_from = false;
    bool has_to = false;
    bool has_amount = false;
    // Offset and drift are in the site's stage units, and may be negative (a sensor reading high).
    const std::vector<Key<Written>> keys{
        {"from", required(),
         [&](const At& value, Context& c, Written& w) {
           w.from = value;
           if (const auto time = rfc3339_time()(value, c)) {
             w.correction.from_ms = *time;
             has_from = true;
           }
         }},
        {"to", required(),
         [&](const At& value, Context& c, Written& w) {
           w.to = value;
           if (const auto time = rfc3339_time()(value, c)) {
             w.correction.to_ms = *time;
             has_to = true;
           }
         }},
        {"offset", optional(),
         [&](const At& value, Context& c, Written& w) {
           has_amount = true;
           if (const auto x = number_value(value, c, Bounds::any())) w.correction.offset = *x;
         }},
        {"drift", optional(),
         [&](const At& value, Context& c, Written& w) {
           has_amount = true;
           if (const auto x = number_value(value, c, Bounds::any())) w.correction.drift = *x;
         }},
    };
    const std::size_t before = cx.error_count();
    read_map(entry, keys, cx, out);
    if (entry.node.IsMap() && !has_amount) {
      cx.error(entry, "a correction needs `offset`, `drift` or both (stage units)");
    }
    if (has_from && has_to && out.correction.to_ms <= out.correction.from_ms) {
      cx.error(*out.to, fmt::format("must be after `from` ({})", time_text(out.from)));
    }
    if (cx.error_count() == before) corrections.push_back(std::move(out));
  }
  std::stable_sort(corrections.begin(), corrections.end(), [](const Written& a, const Written& b) {
    return a.correction.from_ms < b.correction.from_ms;
  });
  // Sorted by start, a correction overlaps another only if it starts before the previous ends.
  for (std::size_t i = 1; i < corrections.size(); ++i) {
    const Written& previous = corrections[i - 1];
    const Written& next = corrections[i];
    if (next.correction.from_ms < previous.correction.to_ms) {
      cx.error(*next.from, fmt::format("overlaps the correction on line {} (from {} to {}); "
                                       "corrections must not overlap",
                                       previous.correction.line, time_text(previous.from),
                                       time_text(previous.to)));
    }
  }
  site.corrections.clear();
  for (auto& written : corrections) site.corrections.push_back(written.correction);
}

}  // namespace stagewell::config_detail
