// /api/sites: every configured site with its latest reading, today's volume so far and its open
// alarms. One primary-key lookup per site and table: bounded whatever the database's size.
#include <fmt/format.h>

#include <algorithm>
#include <nlohmann/json.hpp>

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
              {"coverage", figures.coverage},
              {"readings", figures.readings},
              {"flagged", figures.flagged}};
}

// Open alarms by site id, each site's in kind order.
Result<std::map<std::string, json>> open_alarms(StatusApi::State& state) {
  std::map<std::string, json> by_site;
  auto open = state.store.open_alarms();
  if (!open) return std::unexpected(open.error());
  std::stable_sort(open->begin(), open->end(), [](const auto& a, const auto& b) {
    return std::pair(std::string_view(a.site), alarms::name(a.kind)) <
           std::pair(std::string_view(b.site), alarms::name(b.kind));
  });
  for (const alarms::AlarmRecord& alarm : *open) {
    by_site[alarm.site].push_back({{"kind", alarms::name(alarm.kind)},
                                   {"raised", format_timestamp_utc(alarm.raised_ms)},
                                   {"value", alarm.value},
                                   {"threshold", alarm.threshold}});
  }
  return by_site;
}

}  // namespace

Result<HttpAnswer> sites_answer(StatusApi::State& state, std::int64_t now_ms) {
  const auto system = state.config.units;
  const daily::Day today = local_day(state, now_ms);
  const std::string today_text = daily::format_day(today);
  auto alarms = open_alarms(state);
  if (!alarms) return std::unexpected(alarms.error());
  auto alarms_known = state.store.has_alarms();
  if (!alarms_known) return std::unexpected(alarms_known.error());

  json sites = json::array();
  for (const auto& site : state.config.sites) {
    json entry{
        {"id", site.id},
        {"name", site.name},
        {"stage_unit", units::symbol(site.stage.units)},
        {"depth_unit", units::length_symbol(system)},
        {"discharge_unit", units::discharge_symbol(system)},
        {"volume_unit", units::volume_symbol(system)},
        {"max_gap_s", site.checks.max_gap_s},
        {"latest", nullptr},
        {"today", {{"day", today_text}, {"volume", nullptr}, {"coverage", 0.0}, {"readings", 0}}},
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
    if (auto found = alarms->find(site.id); found != alarms->end()) {
      entry["alarms"] = found->second;
    }
    sites.push_back(std::move(entry));
  }
  const json body{{"now", format_timestamp_utc(now_ms)},
                  {"timezone", state.config.timezone},
                  {"today", today_text},
                  {"units", units::name(system)},
                  {"alarms_available", *alarms_known},
                  {"caution", kDischargeCaution},
                  {"sites", std::move(sites)}};
  return json_answer(200, to_text(body));
}

}  // namespace stagewell::web_detail
