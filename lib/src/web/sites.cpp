// /api/sites: every configured site with its latest reading, today's volume so far and its open
// alarms. One primary-key lookup per site and table: bounded whatever the database's size.
#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "stagewell/units.hpp"
#include "web/state.hpp"

namespace stagewell::web_detail {
namespace {

using nlohmann::json;

json optional_number(const sqlite::Statement& row, int column) {
  if (row.column_is_null(column)) return nullptr;
  return row.column_double(column);
}

Result<json> latest_reading(StatusApi::State& state, SiteKey key, std::int64_t now_ms) {
  auto select = state.store.connection().cached(
      "SELECT time_ms, stage, depth, discharge, flags FROM readings WHERE site_key = ?1 "
      "ORDER BY time_ms DESC LIMIT 1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, key.value);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return json(nullptr);
  const std::int64_t time_ms = (*select)->column_int64(0);
  return json{{"time", format_timestamp_utc(time_ms)},
              {"age_s", static_cast<double>(now_ms - time_ms) / 1000.0},
              {"stage", (*select)->column_double(1)},
              {"depth", (*select)->column_double(2)},
              {"discharge", optional_number(**select, 3)},
              {"flags", flag_names((*select)->column_int64(4))}};
}

Result<json> day_figures(StatusApi::State& state, SiteKey key, const std::string& day) {
  auto select = state.store.connection().cached(
      "SELECT volume, coverage, readings, flagged FROM daily_figures "
      "WHERE site_key = ?1 AND day = ?2");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, key.value);
  (*select)->bind(2, std::string_view(day));
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return json{{"day", day}, {"volume", nullptr}, {"coverage", 0.0}, {"readings", 0}};
  return json{{"day", day},
              {"volume", optional_number(**select, 0)},
              {"coverage", (*select)->column_double(1)},
              {"readings", (*select)->column_int64(2)},
              {"flagged", (*select)->column_int64(3)}};
}

// Open alarms by site id, from the `alarms` view (site, kind, raised, cleared, value, threshold)
// when the database has one. `raised` is passed on as stored (text or number).
Result<std::map<std::string, json>> open_alarms(StatusApi::State& state) {
  std::map<std::string, json> by_site;
  auto present = has_alarms(state);
  if (!present) return std::unexpected(present.error());
  if (!*present) return by_site;
  auto select = state.store.connection().prepare(
      "SELECT site, kind, raised, typeof(raised), value, threshold FROM alarms "
      "WHERE cleared IS NULL ORDER BY site, kind LIMIT 1000");
  if (!select) return std::unexpected(select.error());
  while (true) {
    auto row = select->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    const std::string type = select->column_text(3);
    json raised = type == "integer" || type == "real" ? json(select->column_double(2))
                  : type == "null"                    ? json(nullptr)
                                                      : json(select->column_text(2));
    by_site[select->column_text(0)].push_back({{"kind", select->column_text(1)},
                                               {"raised", raised},
                                               {"value", optional_number(*select, 4)},
                                               {"threshold", optional_number(*select, 5)}});
  }
  return by_site;
}

}  // namespace

Result<HttpAnswer> sites_answer(StatusApi::State& state, std::int64_t now_ms) {
  const auto system = state.config.units;
  const std::string today = local_day(state, now_ms);
  auto alarms = open_alarms(state);
  if (!alarms) return std::unexpected(alarms.error());
  auto alarms_known = has_alarms(state);
  if (!alarms_known) return std::unexpected(alarms_known.error());

  json sites = json::array();
  for (const auto& site : state.config.sites) {
    json entry{{"id", site.id},
               {"name", site.name},
               {"stage_unit", units::symbol(site.stage.units)},
               {"depth_unit", units::length_symbol(system)},
               {"discharge_unit", units::discharge_symbol(system)},
               {"volume_unit", units::volume_symbol(system)},
               {"max_gap_s", site.checks.max_gap_s},
               {"latest", nullptr},
               {"today", {{"day", today}, {"volume", nullptr}, {"coverage", 0.0}, {"readings", 0}}},
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
                  {"today", today},
                  {"units", units::name(system)},
                  {"alarms_available", *alarms_known},
                  {"caution", kDischargeCaution},
                  {"sites", std::move(sites)}};
  return json_answer(200, to_text(body));
}

}  // namespace stagewell::web_detail
