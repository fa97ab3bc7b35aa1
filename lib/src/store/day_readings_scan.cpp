// ReadingsTable::scan_day_readings: a site's readings for the daily figures, collected by an
// application-defined aggregate inside one step of one statement.
//
// Read row by row (day_readings), each reading costs a step and three column calls through
// SQLite's API, checked one by one: for a year of one-minute readings that is most of the time a
// report on stale figures takes. An aggregate is handed each row's values by SQLite's own loop
// instead. It gets its state (where to put them, whom to hand them to) through SQLite's
// pointer-passing interface (sqlite3_bind_pointer): only this program's statement can give it
// one, and SQL typed by anyone else gets an error from it, never memory.
#include "store/day_readings_scan.hpp"

#include <fmt/format.h>
#include <sqlite3.h>

#include <exception>
#include <functional>
#include <optional>
#include <span>
#include <vector>

#include "stagewell/readings_table.hpp"
#include "stagewell/uncertainty.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

constexpr const char* kFunction = "stagewell_day_readings";
// The type name the state's pointer is bound and fetched under (compared as text by SQLite).
constexpr const char* kScanType = "stagewell.day_readings_scan";

// Readings handed over at a time: 128 KiB, which stays in the processor's cache.
constexpr std::size_t kStretch = 4096;

// One run of the aggregate.
struct Scan {
  std::vector<daily::DayReading> stretch;
  const std::function<void(std::span<const daily::DayReading>)>* take = nullptr;
  std::exception_ptr failure;           // thrown by `take`: rethrown once SQLite has returned
  std::optional<std::int64_t> last_ms;  // the time of the last reading taken

  void hand_over() {
    (*take)(stretch);
    stretch.clear();
  }
};

// One row: (time_ms, discharge, flags, band, the Scan pointer).
void take_row(sqlite3_context* context, int /*arguments: 5*/, sqlite3_value** values) {
  // The pointer is the same for every row: fetched at the first, then kept in the aggregate's
  // own state (SQLite zeroes it when the run starts).
  auto** state = static_cast<Scan**>(sqlite3_aggregate_context(context, sizeof(Scan*)));
  if (state == nullptr) return sqlite3_result_error_nomem(context);
  if (*state == nullptr) {
    *state = static_cast<Scan*>(sqlite3_value_pointer(values[4], kScanType));
    if (*state == nullptr) {
      return sqlite3_result_error(context, "stagewell_day_readings: no scan was bound", -1);
    }
  }
  Scan& scan = **state;
  daily::DayReading reading;
  reading.time_ms = sqlite3_value_int64(values[0]);
  if (sqlite3_value_type(values[1]) != SQLITE_NULL) {
    reading.discharge = sqlite3_value_double(values[1]);
  }
  reading.flags = Flags(static_cast<std::uint32_t>(sqlite3_value_int64(values[2])));
  if (sqlite3_value_type(values[3]) != SQLITE_NULL) {
    reading.band = band_from_bp(sqlite3_value_int64(values[3]));
  }
  // SQLite walks a range of the primary key in key order, which is time order; SQL promises an
  // aggregate no order, though, so the order is checked rather than assumed.
  if (scan.last_ms && reading.time_ms <= *scan.last_ms) {
    return sqlite3_result_error(context, "stagewell_day_readings: rows out of time order", -1);
  }
  scan.last_ms = reading.time_ms;
  try {  // no exception may cross SQLite's C frames
    scan.stretch.push_back(reading);
    if (scan.stretch.size() == kStretch) scan.hand_over();
  } catch (...) {
    scan.failure = std::current_exception();
    sqlite3_result_error(context, "stagewell_day_readings: the reader failed", -1);
  }
}

void finish(sqlite3_context* context) { sqlite3_result_null(context); }

}  // namespace

namespace store_detail {

Result<void> add_day_readings_function(sqlite::Connection& connection) {
  // DIRECTONLY: not from a view or a trigger, whoever wrote them.
  const int rc =
      sqlite3_create_function_v2(connection.handle(), kFunction, 5, SQLITE_UTF8 | SQLITE_DIRECTONLY,
                                 nullptr, nullptr, take_row, finish, nullptr);
  if (rc != SQLITE_OK) {
    return std::unexpected(
        sqlite::to_error(rc, connection.handle(), fmt::format("registering {}()", kFunction)));
  }
  return {};
}

}  // namespace store_detail

Result<void> ReadingsTable::scan_day_readings(
    SiteKey site, std::int64_t from_ms, std::int64_t to_ms,
    const std::function<void(std::span<const daily::DayReading>)>& take) {
  Scan scan;
  scan.stretch.reserve(kStretch);
  scan.take = &take;
  {
    // One range of the primary key (site_key, time_ms).
    auto select = core_->db().cached(
        "SELECT stagewell_day_readings(time_ms, discharge, flags, band_bp, ?4) FROM readings "
        "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms <= ?3");
    if (!select) return std::unexpected(select.error());
    auto& s = **select;
    s.bind(1, site.value);
    s.bind(2, from_ms);
    s.bind(3, to_ms);
    s.bind_pointer(4, &scan, kScanType);
    auto row = s.step();  // the aggregate's one row: every reading has been taken
    if (scan.failure) std::rethrow_exception(scan.failure);
    if (!row) return std::unexpected(row.error());
  }  // the statement is reset here: its read of the table ends before the last stretch
  if (!scan.stretch.empty()) scan.hand_over();
  return {};
}

}  // namespace stagewell
