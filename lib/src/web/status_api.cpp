// The routes of the StatusApi, and what every answer shares.
#include "stagewell/status_api.hpp"

#include <cctz/civil_time.h>
#include <cctz/time_zone.h>
#include <fmt/format.h>

#include <chrono>
#include <nlohmann/json.hpp>

#include "stagewell/uncertainty.hpp"
#include "web/state.hpp"

namespace stagewell {

using web_detail::json_answer;
using web_detail::to_text;

HttpAnswer json_error(int status, std::string_view message) {
  return json_answer(status, to_text(nlohmann::json{{"error", message}}));
}

namespace web_detail {

HttpAnswer json_answer(int status, const std::string& body) {
  HttpAnswer answer;
  answer.status = status;
  answer.content_type = "application/json; charset=utf-8";
  answer.headers.emplace_back("Cache-Control", "no-store");
  answer.body = body;
  return answer;
}

std::string to_text(const nlohmann::json& value) {
  return value.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
}

Result<std::optional<SiteKey>> site_key(StatusApi::State& state, const std::string& id) {
  if (auto found = state.site_keys.find(id); found != state.site_keys.end()) return found->second;
  auto key = state.store.find_site(id);
  if (!key) return std::unexpected(key.error());
  if (*key) state.site_keys.emplace(id, **key);
  return *key;
}

daily::Day local_day(const StatusApi::State& state, std::int64_t time_ms) {
  const auto instant = std::chrono::system_clock::time_point(std::chrono::milliseconds(time_ms));
  return cctz::civil_day(
      cctz::convert(std::chrono::time_point_cast<cctz::seconds>(instant), state.zone.cctz_zone()));
}

std::vector<std::string> flag_names(Flags flags) {
  std::vector<std::string> names;
  for (const Flag flag : all_flags()) {
    if (flags.has(flag)) names.emplace_back(name(flag));
  }
  return names;
}

std::optional<double> band_low(const StoredReading& reading) {
  return stagewell::band_low(reading.discharge, reading.band);
}

std::optional<double> band_high(const StoredReading& reading) {
  return stagewell::band_high(reading.discharge, reading.band);
}

std::optional<double> band_percent(const StoredReading& reading) {
  if (!reading.discharge || !reading.band) return std::nullopt;
  return 100.0 * *reading.band;
}

}  // namespace web_detail

StatusApi::StatusApi(std::unique_ptr<State> state) : state_(std::move(state)) {}
StatusApi::~StatusApi() = default;

Result<std::unique_ptr<StatusApi>> StatusApi::open(const Config& config, LiveFiguresSource live) {
  // A short wait: a reader in WAL mode waits only in rare cases (a checkpoint resetting the log),
  // and a request should rather fail than hold the service's loop.
  StoreOptions options;
  options.lock_wait.give_up_after_ms = 200;
  auto store = StoreReader::open(config.database, options);
  if (!store) return std::unexpected(store.error());
  auto zone = TimeZone::parse(config.timezone);
  if (!zone) return std::unexpected(zone.error());
  auto state = std::unique_ptr<State>(
      new State{config, std::move(*store), std::move(*zone), std::move(live), {}, std::nullopt});
  return std::unique_ptr<StatusApi>(new StatusApi(std::move(state)));
}

HttpAnswer StatusApi::answer(std::string_view method, std::string_view target,
                             std::string_view accept, std::int64_t now_ms) {
  using namespace web_detail;
  if (method != "GET" && method != "HEAD") {
    auto answer = json_error(405, "only GET and HEAD are served: this server changes nothing");
    answer.headers.emplace_back("Allow", "GET, HEAD");
    return answer;
  }
  if (target.size() > kMaxTargetBytes) {
    return json_error(414,
                      fmt::format("the request target is longer than {} bytes", kMaxTargetBytes));
  }
  auto parsed = parse_target(target);
  if (!parsed) {
    return json_error(parsed.error().kind == ErrorKind::not_found ? 404 : 400,
                      parsed.error().message);
  }
  const auto& segments = parsed->segments;
  const auto unexpected_params =
      [&](std::initializer_list<std::string_view> allowed) -> std::optional<HttpAnswer> {
    for (const auto& [key, value] : parsed->query) {
      if (std::find(allowed.begin(), allowed.end(), key) == allowed.end()) {
        return json_error(400, fmt::format("unknown query parameter \"{}\"", key));
      }
    }
    return std::nullopt;
  };
  Result<HttpAnswer> result = json_error(404, "no such path; try /, /api/sites or /metrics");
  try {
    if (segments.empty()) {
      result = page_answer();
    } else if (segments.size() == 1 && segments[0] == "metrics") {
      result = metrics_answer(*state_, accept, now_ms);
    } else if (segments.size() >= 2 && segments[0] == "api" && segments[1] == "sites") {
      if (segments.size() == 2) {
        if (auto bad = unexpected_params({})) return *bad;
        result = sites_answer(*state_, now_ms);
      } else if (segments.size() == 3) {
        const SiteConfig* site = state_->config.find_site(segments[2]);
        if (site == nullptr) return json_error(404, fmt::format("no site \"{}\"", segments[2]));
        if (auto bad = unexpected_params({})) return *bad;
        result = site_answer(*state_, *site, now_ms);
      } else if (segments.size() == 4) {
        const SiteConfig* site = state_->config.find_site(segments[2]);
        if (site == nullptr) return json_error(404, fmt::format("no site \"{}\"", segments[2]));
        if (segments[3] == "readings" || segments[3] == "daily") {
          if (auto bad = unexpected_params({"from", "to"})) return *bad;
          result = segments[3] == "readings" ? readings_answer(*state_, *site, *parsed, now_ms)
                                             : daily_answer(*state_, *site, *parsed, now_ms);
        }
      }
    }
  } catch (const std::exception& e) {
    // nlohmann-json or the standard library; nothing leaves the module.
    return json_error(500, fmt::format("internal error: {}", e.what()));
  }
  if (!result) {
    state_->site_keys.clear();
    state_->store_failure = result.error();
    return json_error(500,
                      fmt::format("the database could not be read: {}", result.error().message));
  }
  return *result;
}

std::optional<Error> StatusApi::take_store_failure() {
  return std::exchange(state_->store_failure, std::nullopt);
}

}  // namespace stagewell
