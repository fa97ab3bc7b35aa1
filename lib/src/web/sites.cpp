// /api/sites and /api/sites/{id}: every configured site (or one) with its units, location, latest
// reading, today's volume so far and its open alarms. One primary-key lookup per site and table:
// bounded whatever the database's size.
#include <fmt/format.h>

#include <algorithm>
#include <map>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "stagewell/units.hpp"
#include "web/state.hpp"

namespace stagewell::web_detail {
namespace {

using nlohmann::json;

Result<json> latest_reading(StatusApi::State& state, SiteKey key, std::int64_t now_ms) {
  auto latest = state.store.latest_reading(key);
  if (!latest) return std::unexpected(latest.error());
  if (!*latest) return json(nullptr);
  const StoredReading& reading = **latest;
  return json{{"time", format_timestamp_utc(reading.time_ms)},
              {"age_s", static_cast<double>(now_ms - reading.time_ms) / 1000.0},
              {"stage", reading.stage},
              {"depth", reading.depth},
              {"discharge", optional_number(reading.discharge)},
              {"discharge_low", optional_number(band_low(reading))},
              {"discharge_high", optional_number(band_high(reading))},
              {"band_percent", optional_number(band_percent(reading))},
              {"discharge_jones", optional_number(reading.discharge_jones)},
              {"flags", flag_names(reading.flags)}};
}

Result<json> day_figures(StatusApi::State& state, SiteKey key, daily::Day day) {
  const std::string text = daily::format_day(day);
  auto days = state.store.days(key, day, day);
  if (!days) return std::unexpected(days.error());
  if (days->empty()) {
    return json{{"day", text}, {"volume", nullptr}, {"coverage", 0.0}, {"readings", 0}};
  }
  const daily::DayFigures& figures = days->front();
  return json{{"day", text},
              {"volume", optional_number(figures.volume)},
              {"volume_low", optional_number(figures.volume_low)},
              {"volume_high", optional_number(figures.volume_high)},
              {"coverage", figures.coverage},
              {"readings", figures.readings},
              {"flagged", figures.flagged}};
}

// Open alarms by site id, each site's in kind order.
Result<std::map<std::string, std::vector<alarms::AlarmRecord>>> open_alarms(
    StatusApi::State& state) {
  std::map<std::string, std::vector<alarms::AlarmRecord>> by_site;
  auto open = state.store.open_alarms();
  if (!open) return std::unexpected(open.error());
  std::stable_sort(open->begin(), open->end(), [](const auto& a, const auto& b) {
    return std::pair(std::string_view(a.site), alarms::name(a.kind)) <
           std::pair(std::string_view(b.site), alarms::name(b.kind));
  });
  for (alarms::AlarmRecord& alarm : *open) by_site[alarm.site].push_back(std::move(alarm));
  return by_site;
}

// The UCUM code of an alarm's value and threshold (alarms.hpp): discharge for the flow alarms,
// seconds for stale, the site's stage unit per hour for rising. A reader needs it to show the
// numbers with their unit.
std::string alarm_unit(alarms::AlarmKind kind, const SiteConfig& site, units::System system) {
  switch (kind) {
    case alarms::AlarmKind::low_flow:
    case alarms::AlarmKind::high_flow:
      return std::string(units::ucum_discharge(system));
    case alarms::AlarmKind::stale:
      return "s";
    case alarms::AlarmKind::rising:
      return std::string(units::ucum(site.stage.units)) + "/h";
  }
  return "";
}

json alarm_entries(const std::vector<alarms::AlarmRecord>& open, const SiteConfig& site,
                   units::System system) {
  json entries = json::array();
  for (const alarms::AlarmRecord& alarm : open) {
    entries.push_back({{"kind", alarms::name(alarm.kind)},
                       {"raised", format_timestamp_utc(alarm.raised_ms)},
                       {"value", alarm.value},
                       {"threshold", alarm.threshold},
                       {"unit", alarm_unit(alarm.kind, site, system)}});
  }
  return entries;
}

// One site as /api/sites lists it and /api/sites/{id} answers it.
Result<json> site_entry(StatusApi::State& state, const SiteConfig& site,
                        const std::map<std::string, std::vector<alarms::AlarmRecord>>& alarms,
                        daily::Day today, std::int64_t now_ms) {
  const auto system = state.config.units;
  json entry{{"id", site.id},
             {"name", site.name},
             // UCUM codes (The Unified Code for Units of Measure), as everywhere in the API.
             {"stage_unit", units::ucum(site.stage.units)},
             {"depth_unit", units::ucum_length(system)},
             {"discharge_unit", units::ucum_discharge(system)},
             {"volume_unit", units::ucum_volume(system)},
             {"location", site.location ? json{{"latitude", site.location->latitude},
                                               {"longitude", site.location->longitude}}
                                        : json(nullptr)},
             {"datum", site.datum ? json(*site.datum) : json(nullptr)},
             {"max_gap_s", site.checks.max_gap_s},
             {"latest", nullptr},
             {"today",
              {{"day", daily::format_day(today)},
               {"volume", nullptr},
               {"coverage", 0.0},
               {"readings", 0}}},
             {"alarms", json::array()}};
  auto key = site_key(state, site.id);
  if (!key) return std::unexpected(key.error());
  if (*key) {
    auto latest = latest_reading(state, **key, now_ms);
    if (!latest) return std::unexpected(latest.error());
    entry["latest"] = std::move(*latest);
    auto figures = day_figures(state, **key, today);
    if (!figures) return std::unexpected(figures.error());
    entry["today"] = std::move(*figures);
  }
  if (auto found = alarms.find(site.id); found != alarms.end()) {
    entry["alarms"] = alarm_entries(found->second, site, system);
  }
  return entry;
}

// What every answer about sites starts with.
json envelope(StatusApi::State& state, daily::Day today, bool alarms_known, std::int64_t now_ms) {
  return json{{"now", format_timestamp_utc(now_ms)}, {"timezone", state.config.timezone},
              {"today", daily::format_day(today)},   {"units", units::name(state.config.units)},
              {"alarms_available", alarms_known},    {"caution", kDischargeCaution}};
}

}  // namespace

Result<HttpAnswer> sites_answer(StatusApi::State& state, std::int64_t now_ms) {
  const daily::Day today = local_day(state, now_ms);
  auto alarms = open_alarms(state);
  if (!alarms) return std::unexpected(alarms.error());
  auto alarms_known = state.store.has_alarms();
  if (!alarms_known) return std::unexpected(alarms_known.error());
  json sites = json::array();
  for (const auto& site : state.config.sites) {
    auto entry = site_entry(state, site, *alarms, today, now_ms);
    if (!entry) return std::unexpected(entry.error());
    sites.push_back(std::move(*entry));
  }
  json body = envelope(state, today, *alarms_known, now_ms);
  body["sites"] = std::move(sites);
  return json_answer(200, to_text(body));
}

Result<HttpAnswer> site_answer(StatusApi::State& state, const SiteConfig& site,
                               std::int64_t now_ms) {
  const daily::Day today = local_day(state, now_ms);
  auto alarms = open_alarms(state);
  if (!alarms) return std::unexpected(alarms.error());
  auto alarms_known = state.store.has_alarms();
  if (!alarms_known) return std::unexpected(alarms_known.error());
  auto entry = site_entry(state, site, *alarms, today, now_ms);
  if (!entry) return std::unexpected(entry.error());
  json body = envelope(state, today, *alarms_known, now_ms);
  body["site"] = std::move(*entry);
  return json_answer(200, to_text(body));
}

}  // namespace stagewell::web_detail
