// What the service answers over HTTP: the status page, the JSON API and the metrics
// (docs/http-api.md, "HTTP: the status page, API and metrics"). This is the part without sockets: a
// request's method, target and Accept header in, a complete answer out.
// daemon/stagewelld/http_*.cpp carry it over Boost.Beast.
//
// Reads come from the database through a StoreReader (store_reader.hpp): a read-only connection
// of its own, so a request never takes the writer's lock; every query is bounded (one site's rows
// over a limited range, with a row limit). Nothing a request does changes anything.
//
// Not thread-safe: it belongs to the thread that runs the service's io_context.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/result.hpp"

namespace stagewell {

// One HTTP answer: status code (RFC 9110), content type, extra header fields and the body. For a
// HEAD request the body is the one GET would send; the transport sends only its length.
struct HttpAnswer {
  int status = 200;
  std::string content_type;
  std::vector<std::pair<std::string, std::string>> headers;
  std::string body;
};

// How shipping to the warehouse goes (docs/warehouse.md), when one is configured.
struct WarehouseFigures {
  bool connected = false;         // the last attempt reached the warehouse
  std::int64_t lag_readings = 0;  // readings not shipped yet (an upper bound)
  std::optional<std::int64_t> last_shipped_ms;  // the last shipment the warehouse committed
  std::int64_t shipped_readings = 0;            // readings sent since the service started
};

// Figures that live in the service, not in the database: the ingest counters since start.
struct LiveFigures {
  IngestCounts counts;
  std::int64_t started_ms = 0;  // when the service started (ms since epoch, UTC)
  // While the database cannot be written (a full disk, a damaged file): since when (ms since
  // epoch, UTC); 0 when writing works.
  std::int64_t store_failing_since_ms = 0;
  std::optional<WarehouseFigures> warehouse;  // empty when no warehouse is configured
};
using LiveFiguresSource = std::function<LiveFigures()>;

// Limits on what one request may ask for (documented in docs/http-api.md).
inline constexpr std::int64_t kMaxReadingsRangeMs = 31LL * 24 * 3600 * 1000;  // 31 days
inline constexpr std::int64_t kMaxReadingsPerRequest = 20000;  // rows; more: truncated
inline constexpr int kMaxDailyRangeDays = 366;
inline constexpr std::size_t kMaxTargetBytes = 2048;  // longer request targets: 414

// The cautions shown wherever discharge is shown.
inline constexpr std::string_view kDischargeCaution =
    "Discharge is an estimate from Manning's equation for the configured cross-section. Verify "
    "it with field measurements. Not for life-safety decisions without a licensed engineer's "
    "review.";

class StatusApi {
 public:
  // Opens the configured database read-only. REQUIRES: the database exists at the current schema
  // version (the service opens its Ingestor first).
  static Result<std::unique_ptr<StatusApi>> open(const Config& config, LiveFiguresSource live);
  ~StatusApi();

  // Answers one request. `accept` is the request's Accept field (may be empty); `now_ms` is the
  // current time (ms since epoch, UTC). Never throws; a failed query is a 500 with a JSON error.
  HttpAnswer answer(std::string_view method, std::string_view target, std::string_view accept,
                    std::int64_t now_ms);
  // Why the database could not be read for the last failed answer (a 500), once; nullopt when
  // nothing failed since the last call. The caller decides what is worth logging.
  std::optional<Error> take_store_failure();

  struct State;

 private:
  explicit StatusApi(std::unique_ptr<State> state);
  std::unique_ptr<State> state_;
};

// A JSON error answer {"error": message} with `status`.
HttpAnswer json_error(int status, std::string_view message);

}  // namespace stagewell
