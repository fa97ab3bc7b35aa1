// Any request line the HTTP transport lets through, to the status page and API (status_api.hpp):
// method, target and Accept field of any bytes, answered over a small real database. Checked on
// every input, from the HTTP semantics the API follows (RFC 9110) and docs/http-api.md:
//  - the status is a valid code (RFC 9110, section 15: 100-599), never 500 on this healthy store;
//  - a JSON answer is JSON (RFC 8259); a 405 names the allowed methods (RFC 9110, 15.5.6);
//  - HEAD gives the same status and body as GET (RFC 9110, 9.3.2; the transport drops the body);
//  - metrics in the OpenMetrics format end with "# EOF" (OpenMetrics 1.0, "Overall structure").
#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

#include "fuzz_support.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/status_api.hpp"

namespace {

using stagewell::fuzz::harness_failed;

void expect(bool holds, const char* what) {
  if (!holds) harness_failed(what);
}

constexpr std::int64_t kNoon = 1'777'636'800'000;  // 2026-05-01T12:00:00Z

// A database with two sites and a day of readings, and the API over it.
std::unique_ptr<stagewell::StatusApi> make_api() {
  const auto db = (stagewell::fuzz::scratch_dir() / "http.db").string();
  const auto config = stagewell::fuzz::config_from(
      "units: metric\ndatabase: " + db +
      "\ntimezone: America/Denver\nhttp: {listen: 127.0.0.1:8207}\n"
      "sites:\n"
      "  - id: weir\n    section: {shape: rectangular, width: 1.0, height: 1.0}\n"
      "    roughness: 0.013\n    slope: 0.001\n"
      "    checks: {min_stage: 0, max_stage: 0.9, spike: 0.2}\n"
      "    alarms: {low_flow: {below: 0.05}, stale: {after: 30m}}\n"
      "  - id: pipe.2\n    section: {shape: circular, diameter: 0.6}\n"
      "    roughness: 0.012\n    slope: 0.004\n");
  auto ingestor =
      stagewell::Ingestor::open(config, stagewell::IngestorOptions{}, [] { return kNoon; });
  if (!ingestor) harness_failed(ingestor.error().message);
  for (int minute = 0; minute < 24 * 60; minute += 10) {
    for (const char* site : {"weir", "pipe.2"}) {
      stagewell::Record record;
      record.site = site;
      record.time_ms = kNoon - 86'400'000 + minute * 60'000LL;
      record.stage = 0.02 + 0.001 * (minute % 700) + (minute == 600 ? 0.5 : 0.0);
      record.line_number = minute + 1;
      if (!(*ingestor)->reading(record, {"fuzz", record.line_number, ""})) {
        harness_failed("a reading could not be stored");
      }
    }
  }
  if (!(*ingestor)->commit()) harness_failed("the readings could not be committed");
  auto api = stagewell::StatusApi::open(config, [] { return stagewell::LiveFigures{}; });
  if (!api) harness_failed(api.error().message);
  return std::move(*api);
}

void check(const stagewell::HttpAnswer& answer) {
  expect(answer.status >= 100 && answer.status <= 599, "a status outside 100-599");
  expect(answer.status != 500, "a 500 from a healthy store");
  if (answer.content_type.starts_with("application/json")) {
    expect(nlohmann::json::accept(answer.body), "a JSON answer that is not JSON");
  }
  if (answer.status == 405) {
    bool allow = false;
    for (const auto& [name, value] : answer.headers) allow = allow || name == "Allow";
    expect(allow, "a 405 without Allow");
  }
  if (answer.content_type.starts_with("application/openmetrics-text")) {
    expect(answer.body.ends_with("# EOF\n"), "OpenMetrics text without # EOF");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const auto api = make_api();
  // The input: the target, then optionally "\n" and the Accept field, then "\n" and a method.
  std::string_view rest(reinterpret_cast<const char*>(data), size);
  const auto take_line = [&rest] {
    const auto end = rest.find('\n');
    const std::string_view line = rest.substr(0, end);
    rest = end == std::string_view::npos ? std::string_view() : rest.substr(end + 1);
    return line;
  };
  const std::string_view target = take_line();
  const std::string_view accept = take_line();
  const std::string_view method = rest.empty() ? std::string_view("GET") : take_line();

  const auto answer = api->answer(method, target, accept, kNoon + 30'000);
  check(answer);
  if (method == "GET") {
    const auto head = api->answer("HEAD", target, accept, kNoon + 30'000);
    expect(head.status == answer.status, "HEAD and GET gave different statuses");
    expect(head.body == answer.body, "HEAD and GET gave different bodies");
  }
  (void)api->take_store_failure();
  return 0;
}
