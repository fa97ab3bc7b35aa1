// What every answer of the StatusApi reads from: the configuration, its own reader of the database
// (StoreReader: typed reads, no SQL here), the configuration's time zone and the service's live
// figures; and the answers, one file each.
#pragma once

#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "stagewell/status_api.hpp"
#include "stagewell/store_reader.hpp"
#include "stagewell/timestamp.hpp"
#include "web/target.hpp"

namespace stagewell {

struct StatusApi::State {
  Config config;
  StoreReader store;
  TimeZone zone;  // of the daily figures: "today" is the local day here
  LiveFiguresSource live;
  std::map<std::string, SiteKey, std::less<>> site_keys;  // found on first use
  std::optional<Error> store_failure;  // the last failed answer's (take_store_failure)
};

namespace web_detail {

// The store key of a configured site; nullopt when the database has no row for it yet.
Result<std::optional<SiteKey>> site_key(StatusApi::State& state, const std::string& id);

// The local day of `time_ms` in the configuration's time zone.
daily::Day local_day(const StatusApi::State& state, std::int64_t time_ms);

// Flag names of a stored flag bitmask, in flag order.
std::vector<std::string> flag_names(Flags flags);

// The ends of a reading's band and its half-width in percent (uncertainty.hpp).
std::optional<double> band_low(const StoredReading& reading);
std::optional<double> band_high(const StoredReading& reading);
std::optional<double> band_percent(const StoredReading& reading);

// A number that may be missing: JSON null when it is.
template <typename T>
nlohmann::json optional_number(const std::optional<T>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

HttpAnswer json_answer(int status, const std::string& body);
// JSON text; bytes that are not UTF-8 (from a view another module fills) become U+FFFD rather
// than failing the whole answer.
std::string to_text(const nlohmann::json& value);

// The answers. Errors in the request are answered here (400, 404); a Result error is a failed
// query (500).
Result<HttpAnswer> sites_answer(StatusApi::State& state, std::int64_t now_ms);
Result<HttpAnswer> site_answer(StatusApi::State& state, const SiteConfig& site,
                               std::int64_t now_ms);
Result<HttpAnswer> readings_answer(StatusApi::State& state, const SiteConfig& site,
                                   const Target& target, std::int64_t now_ms);
Result<HttpAnswer> daily_answer(StatusApi::State& state, const SiteConfig& site,
                                const Target& target, std::int64_t now_ms);
Result<HttpAnswer> metrics_answer(StatusApi::State& state, std::string_view accept,
                                  std::int64_t now_ms);
HttpAnswer page_answer();

}  // namespace web_detail
}  // namespace stagewell
