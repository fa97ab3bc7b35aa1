// /api/sites/{id}/readings and /api/sites/{id}/daily: one site's rows over a bounded range.
#include <cctz/civil_time.h>
#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "stagewell/units.hpp"
#include "web/state.hpp"

namespace stagewell::web_detail {
namespace {

using nlohmann::json;

constexpr std::int64_t kDayMs = 24LL * 3600 * 1000;

json optional_number(const sqlite::Statement& row, int column) {
  if (row.column_is_null(column)) return nullptr;
  return row.column_double(column);
}

// "YYYY-MM-DD" exactly, a real calendar day.
std::optional<cctz::civil_day> parse_day(std::string_view text) {
  if (text.size() != 10 || text[4] != '-' || text[7] != '-') return std::nullopt;
  int parts[3] = {0, 0, 0};
  const std::size_t starts[3] = {0, 5, 8};
  const std::size_t lengths[3] = {4, 2, 2};
  for (int i = 0; i < 3; ++i) {
    for (std::size_t j = 0; j < lengths[i]; ++j) {
      const char c = text[starts[i] + j];
      if (c < '0' || c > '9') return std::nullopt;
      parts[i] = parts[i] * 10 + (c - '0');
    }
  }
  const cctz::civil_day day(parts[0], parts[1], parts[2]);
  // cctz normalises 2026-02-30 to 2026-03-02: a day that changed was not a real one.
  if (day.year() != parts[0] || day.month() != parts[1] || day.day() != parts[2]) {
    return std::nullopt;
  }
  return day;
}

std::string day_text(const cctz::civil_day& day) {
  return fmt::format("{:04}-{:02}-{:02}", day.year(), day.month(), day.day());
}

}  // namespace

Result<HttpAnswer> readings_answer(StatusApi::State& state, const SiteConfig& site,
                                   const Target& target, std::int64_t now_ms) {
  // from and to: RFC 3339 with an offset; both ends included. Defaults: the 24 h up to now.
  std::int64_t to_ms = now_ms;
  if (const auto to = target.param("to")) {
    auto parsed = parse_timestamp(*to, nullptr);
    if (!parsed) return json_error(400, fmt::format("to: {}", parsed.error().message));
    to_ms = *parsed;
  }
  std::int64_t from_ms = to_ms - kDayMs;
  if (const auto from = target.param("from")) {
    auto parsed = parse_timestamp(*from, nullptr);
    if (!parsed) return json_error(400, fmt::format("from: {}", parsed.error().message));
    from_ms = *parsed;
    if (!target.param("to")) to_ms = std::max(from_ms, std::min(now_ms, from_ms + kDayMs));
  }
  if (from_ms > to_ms) return json_error(400, "from is after to");
  if (to_ms - from_ms > kMaxReadingsRangeMs) {
    return json_error(400, "the range is longer than 31 days: ask for it in parts");
  }
  auto key = site_key(state, site.id);
  if (!key) return std::unexpected(key.error());

  json readings = json::array();
  bool truncated = false;
  if (*key) {
    auto select = state.store.connection().cached(
        "SELECT time_ms, stage, depth, discharge, flags FROM readings "
        "WHERE site_key = ?1 AND time_ms BETWEEN ?2 AND ?3 ORDER BY time_ms LIMIT ?4");
    if (!select) return std::unexpected(select.error());
    (*select)->bind(1, (*key)->value);
    (*select)->bind(2, from_ms);
    (*select)->bind(3, to_ms);
    (*select)->bind(4, kMaxReadingsPerRequest + 1);
    while (true) {
      auto row = (*select)->step();
      if (!row) return std::unexpected(row.error());
      if (!*row) break;
      if (static_cast<std::int64_t>(readings.size()) == kMaxReadingsPerRequest) {
        truncated = true;
        break;
      }
      readings.push_back({{"time", format_timestamp_utc((*select)->column_int64(0))},
                          {"stage", (*select)->column_double(1)},
                          {"depth", (*select)->column_double(2)},
                          {"discharge", optional_number(**select, 3)},
                          {"flags", flag_names((*select)->column_int64(4))}});
    }
  }
  const json body{{"site", site.id},
                  {"from", format_timestamp_utc(from_ms)},
                  {"to", format_timestamp_utc(to_ms)},
                  {"stage_unit", units::symbol(site.stage.units)},
                  {"depth_unit", units::length_symbol(state.config.units)},
                  {"discharge_unit", units::discharge_symbol(state.config.units)},
                  {"truncated", truncated},
                  {"readings", std::move(readings)}};
  return json_answer(200, to_text(body));
}

Result<HttpAnswer> daily_answer(StatusApi::State& state, const SiteConfig& site,
                                const Target& target, std::int64_t now_ms) {
  // from and to: local days YYYY-MM-DD, both included. Defaults: the 31 days up to today.
  const auto today = parse_day(local_day(state, now_ms));
  cctz::civil_day to_day = today.value_or(cctz::civil_day());
  if (const auto to = target.param("to")) {
    const auto parsed = parse_day(*to);
    if (!parsed) return json_error(400, "to: must be a calendar day YYYY-MM-DD");
    to_day = *parsed;
  }
  cctz::civil_day from_day = to_day - 30;
  if (const auto from = target.param("from")) {
    const auto parsed = parse_day(*from);
    if (!parsed) return json_error(400, "from: must be a calendar day YYYY-MM-DD");
    from_day = *parsed;
    if (!target.param("to")) to_day = from_day + 30;
  }
  if (from_day > to_day) return json_error(400, "from is after to");
  if (to_day - from_day + 1 > kMaxDailyRangeDays) {
    return json_error(400, fmt::format("the range is longer than {} days: ask for it in parts",
                                       kMaxDailyRangeDays));
  }
  auto select = state.store.connection().cached(
      "SELECT day, volume, mean_discharge, min_discharge, min_time, max_discharge, max_time, "
      "coverage, readings, flagged FROM daily WHERE site = ?1 AND day BETWEEN ?2 AND ?3 "
      "ORDER BY day");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, std::string_view(site.id));
  (*select)->bind(2, std::string_view(day_text(from_day)));
  (*select)->bind(3, std::string_view(day_text(to_day)));
  json days = json::array();
  while (true) {
    auto row = (*select)->step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    const auto text_or_null = [&](int column) {
      return (*select)->column_is_null(column) ? json(nullptr)
                                               : json((*select)->column_text(column));
    };
    days.push_back({{"day", (*select)->column_text(0)},
                    {"volume", optional_number(**select, 1)},
                    {"mean_discharge", optional_number(**select, 2)},
                    {"min_discharge", optional_number(**select, 3)},
                    {"min_time", text_or_null(4)},
                    {"max_discharge", optional_number(**select, 5)},
                    {"max_time", text_or_null(6)},
                    {"coverage", (*select)->column_double(7)},
                    {"readings", (*select)->column_int64(8)},
                    {"flagged", (*select)->column_int64(9)}});
  }
  const json body{{"site", site.id},
                  {"from", day_text(from_day)},
                  {"to", day_text(to_day)},
                  {"timezone", state.config.timezone},
                  {"volume_unit", units::volume_symbol(state.config.units)},
                  {"discharge_unit", units::discharge_symbol(state.config.units)},
                  {"days", std::move(days)}};
  return json_answer(200, to_text(body));
}

}  // namespace stagewell::web_detail
