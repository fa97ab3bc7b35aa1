// /api/sites/{id}/readings and /api/sites/{id}/daily: one site's rows over a bounded range.
#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "stagewell/units.hpp"
#include "web/state.hpp"

namespace stagewell::web_detail {
namespace {

using nlohmann::json;

constexpr std::int64_t kDayMs = 24LL * 3600 * 1000;

// The time of a day's lowest or highest discharge, as the `daily` view writes it.
json time_or_null(const std::optional<std::int64_t>& time_ms) {
  return time_ms ? json(format_timestamp_utc(*time_ms)) : json(nullptr);
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
  json next = nullptr;
  if (*key) {
    // One more than the limit: whether there were more to send.
    auto stored = state.store.readings(**key, from_ms, to_ms, kMaxReadingsPerRequest + 1);
    if (!stored) return std::unexpected(stored.error());
    for (const StoredReading& reading : *stored) {
      if (static_cast<std::int64_t>(readings.size()) == kMaxReadingsPerRequest) {
        truncated = true;
        // The rest of the range, from the first reading not sent (site ids and UTC times need
        // no escaping in a target: letters, digits, "_.-:" only).
        next = fmt::format("/api/sites/{}/readings?from={}&to={}", site.id,
                           format_timestamp_utc(reading.time_ms), format_timestamp_utc(to_ms));
        break;
      }
      readings.push_back({{"time", format_timestamp_utc(reading.time_ms)},
                          {"stage", reading.stage},
                          {"depth", reading.depth},
                          {"discharge", optional_number(reading.discharge)},
                          {"discharge_low", optional_number(band_low(reading))},
                          {"discharge_high", optional_number(band_high(reading))},
                          {"discharge_jones", optional_number(reading.discharge_jones)},
                          {"flags", flag_names(reading.flags)}});
    }
  }
  const json body{{"site", site.id},
                  {"from", format_timestamp_utc(from_ms)},
                  {"to", format_timestamp_utc(to_ms)},
                  {"stage_unit", units::ucum(site.stage.units)},
                  {"depth_unit", units::ucum_length(state.config.units)},
                  {"discharge_unit", units::ucum_discharge(state.config.units)},
                  {"truncated", truncated},
                  {"next", std::move(next)},
                  {"readings", std::move(readings)}};
  return json_answer(200, to_text(body));
}

Result<HttpAnswer> daily_answer(StatusApi::State& state, const SiteConfig& site,
                                const Target& target, std::int64_t now_ms) {
  // from and to: local days YYYY-MM-DD, both included. Defaults: the 31 days up to today.
  daily::Day to_day = local_day(state, now_ms);
  if (const auto to = target.param("to")) {
    const auto parsed = daily::parse_day(*to);
    if (!parsed) return json_error(400, "to: must be a calendar day YYYY-MM-DD");
    to_day = *parsed;
  }
  daily::Day from_day = to_day - 30;
  if (const auto from = target.param("from")) {
    const auto parsed = daily::parse_day(*from);
    if (!parsed) return json_error(400, "from: must be a calendar day YYYY-MM-DD");
    from_day = *parsed;
    if (!target.param("to")) to_day = from_day + 30;
  }
  if (from_day > to_day) return json_error(400, "from is after to");
  if (to_day - from_day + 1 > kMaxDailyRangeDays) {
    return json_error(400, fmt::format("the range is longer than {} days: ask for it in parts",
                                       kMaxDailyRangeDays));
  }
  auto key = site_key(state, site.id);
  if (!key) return std::unexpected(key.error());
  json days = json::array();
  if (*key) {
    auto stored = state.store.days(**key, from_day, to_day);
    if (!stored) return std::unexpected(stored.error());
    for (const daily::DayFigures& figures : *stored) {
      days.push_back({{"day", daily::format_day(figures.day)},
                      {"volume", optional_number(figures.volume)},
                      {"volume_low", optional_number(figures.volume_low)},
                      {"volume_high", optional_number(figures.volume_high)},
                      {"mean_discharge", optional_number(figures.mean_discharge)},
                      {"min_discharge", optional_number(figures.min_discharge)},
                      {"min_time", time_or_null(figures.min_time_ms)},
                      {"max_discharge", optional_number(figures.max_discharge)},
                      {"max_time", time_or_null(figures.max_time_ms)},
                      {"coverage", figures.coverage},
                      {"readings", figures.readings},
                      {"flagged", figures.flagged}});
    }
  }
  const json body{{"site", site.id},
                  {"from", daily::format_day(from_day)},
                  {"to", daily::format_day(to_day)},
                  {"timezone", state.config.timezone},
                  {"volume_unit", units::ucum_volume(state.config.units)},
                  {"discharge_unit", units::ucum_discharge(state.config.units)},
                  {"days", std::move(days)}};
  return json_answer(200, to_text(body));
}

}  // namespace stagewell::web_detail
