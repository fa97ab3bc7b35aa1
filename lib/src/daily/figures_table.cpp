// Reading and writing the daily tables of schema/002_daily.sql, and the readings they come from.
#include <fmt/format.h>

#include "stagewell/daily.hpp"

namespace stagewell::daily {
namespace {

void bind_optional(sqlite::Statement& s, int index, std::optional<std::int64_t> value) {
  if (value) {
    s.bind(index, *value);
  } else {
    s.bind_null(index);
  }
}

std::optional<std::int64_t> column_optional_int64(const sqlite::Statement& s, int column) {
  if (s.column_is_null(column)) return std::nullopt;
  return s.column_int64(column);
}

Result<void> delete_flag_counts(sqlite::Connection& connection, SiteKey site,
                                std::string_view day) {
  auto erase = connection.cached("DELETE FROM daily_flag_counts WHERE site_key = ?1 AND day = ?2");
  if (!erase) return std::unexpected(erase.error());
  (*erase)->bind(1, site.value);
  (*erase)->bind(2, day);
  return (*erase)->run();
}

Result<void> delete_day(sqlite::Connection& connection, SiteKey site, std::string_view day) {
  if (auto done = delete_flag_counts(connection, site, day); !done) return done;
  auto erase = connection.cached("DELETE FROM daily_figures WHERE site_key = ?1 AND day = ?2");
  if (!erase) return std::unexpected(erase.error());
  (*erase)->bind(1, site.value);
  (*erase)->bind(2, day);
  return (*erase)->run();
}

Result<void> upsert_figures(sqlite::Connection& connection, SiteKey site, std::string_view day,
                            const DayFigures& f) {
  auto upsert = connection.cached(
      "INSERT INTO daily_figures (site_key, day, start_ms, end_ms, volume, mean_discharge, "
      "min_discharge, min_time_ms, max_discharge, max_time_ms, covered_ms, coverage, readings, "
      "flagged) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14) "
      "ON CONFLICT (site_key, day) DO UPDATE SET start_ms = excluded.start_ms, "
      "end_ms = excluded.end_ms, volume = excluded.volume, "
      "mean_discharge = excluded.mean_discharge, min_discharge = excluded.min_discharge, "
      "min_time_ms = excluded.min_time_ms, max_discharge = excluded.max_discharge, "
      "max_time_ms = excluded.max_time_ms, covered_ms = excluded.covered_ms, "
      "coverage = excluded.coverage, readings = excluded.readings, flagged = excluded.flagged");
  if (!upsert) return std::unexpected(upsert.error());
  auto& s = **upsert;
  s.bind(1, site.value);
  s.bind(2, day);
  s.bind(3, f.start_ms);
  s.bind(4, f.end_ms);
  s.bind(5, f.volume);
  s.bind(6, f.mean_discharge);
  s.bind(7, f.min_discharge);
  bind_optional(s, 8, f.min_time_ms);
  s.bind(9, f.max_discharge);
  bind_optional(s, 10, f.max_time_ms);
  s.bind(11, f.covered_ms);
  s.bind(12, f.coverage);
  s.bind(13, f.readings);
  s.bind(14, f.flagged);
  return s.run();
}

Result<void> insert_flag_counts(sqlite::Connection& connection, SiteKey site, std::string_view day,
                                const DayFigures& f) {
  for (const FlagCount& count : f.flag_counts) {
    auto insert = connection.cached(
        "INSERT INTO daily_flag_counts (site_key, day, bit, readings) VALUES (?1, ?2, ?3, ?4)");
    if (!insert) return std::unexpected(insert.error());
    (*insert)->bind(1, site.value);
    (*insert)->bind(2, day);
    (*insert)->bind(3, static_cast<std::int64_t>(count.flag));
    (*insert)->bind(4, count.readings);
    if (auto done = (*insert)->run(); !done) return done;
  }
  return {};
}

Result<Day> stored_day(const sqlite::Statement& s, int column) {
  const std::string text = s.column_text(column);
  const auto day = parse_day(text);
  if (!day) {
    return fail(ErrorKind::database, fmt::format("daily_figures holds a malformed day '{}'", text));
  }
  return *day;
}

}  // namespace

Result<std::optional<SiteKey>> find_site(sqlite::Connection& connection, std::string_view id) {
  auto select = connection.cached("SELECT site_key FROM sites WHERE id = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, id);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return std::optional<SiteKey>{};
  return std::optional<SiteKey>{SiteKey{(*select)->column_int64(0)}};
}

Result<void> read_readings(sqlite::Connection& connection, SiteKey site, std::int64_t from_ms,
                           std::int64_t to_ms, std::vector<DayReading>& out) {
  out.clear();
  // One range of the readings' primary key (site_key, time_ms): already in time order.
  auto select = connection.cached(
      "SELECT time_ms, discharge, flags FROM readings "
      "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms <= ?3 ORDER BY time_ms");
  if (!select) return std::unexpected(select.error());
  auto& s = **select;
  s.bind(1, site.value);
  s.bind(2, from_ms);
  s.bind(3, to_ms);
  for (;;) {
    auto row = s.step();
    if (!row) return std::unexpected(row.error());
    if (!*row) return {};
    out.push_back(DayReading{s.column_int64(0), s.column_optional_double(1),
                             Flags(static_cast<std::uint32_t>(s.column_int64(2)))});
  }
}

Result<std::vector<DayReading>> read_readings(sqlite::Connection& connection, SiteKey site,
                                              std::int64_t from_ms, std::int64_t to_ms) {
  std::vector<DayReading> readings;
  if (auto done = read_readings(connection, site, from_ms, to_ms, readings); !done) {
    return std::unexpected(done.error());
  }
  return readings;
}

Result<std::optional<std::pair<std::int64_t, std::int64_t>>> reading_span(
    sqlite::Connection& connection, SiteKey site) {
  using Span = std::optional<std::pair<std::int64_t, std::int64_t>>;
  // Two probes of the primary key, not a scan.
  auto select = connection.cached(
      "SELECT (SELECT min(time_ms) FROM readings WHERE site_key = ?1), "
      "(SELECT max(time_ms) FROM readings WHERE site_key = ?1)");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row || (*select)->column_is_null(0)) return Span{};
  return Span{std::pair{(*select)->column_int64(0), (*select)->column_int64(1)}};
}

Result<void> write_day(sqlite::Connection& connection, SiteKey site, const DayFigures& figures) {
  const std::string day = format_day(figures.day);
  if (figures.empty()) return delete_day(connection, site, day);
  if (auto done = upsert_figures(connection, site, day, figures); !done) return done;
  if (auto done = delete_flag_counts(connection, site, day); !done) return done;
  return insert_flag_counts(connection, site, day, figures);
}

Result<std::vector<DayFigures>> read_days(sqlite::Connection& connection, SiteKey site, Day from,
                                          Day to) {
  const std::string first = format_day(from);
  const std::string last = format_day(to);
  std::vector<DayFigures> days;
  {
    auto select = connection.cached(
        "SELECT day, start_ms, end_ms, volume, mean_discharge, min_discharge, min_time_ms, "
        "max_discharge, max_time_ms, covered_ms, coverage, readings, flagged FROM daily_figures "
        "WHERE site_key = ?1 AND day >= ?2 AND day <= ?3 ORDER BY day");
    if (!select) return std::unexpected(select.error());
    auto& s = **select;
    s.bind(1, site.value);
    s.bind(2, std::string_view(first));
    s.bind(3, std::string_view(last));
    for (;;) {
      auto row = s.step();
      if (!row) return std::unexpected(row.error());
      if (!*row) break;
      auto day = stored_day(s, 0);
      if (!day) return std::unexpected(day.error());
      DayFigures f;
      f.day = *day;
      f.start_ms = s.column_int64(1);
      f.end_ms = s.column_int64(2);
      f.volume = s.column_optional_double(3);
      f.mean_discharge = s.column_optional_double(4);
      f.min_discharge = s.column_optional_double(5);
      f.min_time_ms = column_optional_int64(s, 6);
      f.max_discharge = s.column_optional_double(7);
      f.max_time_ms = column_optional_int64(s, 8);
      f.covered_ms = s.column_int64(9);
      f.coverage = s.column_double(10);
      f.readings = s.column_int64(11);
      f.flagged = s.column_int64(12);
      days.push_back(std::move(f));
    }
  }
  auto select = connection.cached(
      "SELECT day, bit, readings FROM daily_flag_counts "
      "WHERE site_key = ?1 AND day >= ?2 AND day <= ?3 ORDER BY day, bit");
  if (!select) return std::unexpected(select.error());
  auto& s = **select;
  s.bind(1, site.value);
  s.bind(2, std::string_view(first));
  s.bind(3, std::string_view(last));
  auto next = days.begin();
  for (;;) {
    auto row = s.step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    auto day = stored_day(s, 0);
    if (!day) return std::unexpected(day.error());
    while (next != days.end() && next->day < *day) ++next;
    if (next == days.end() || next->day != *day) continue;  // counts without figures: ignored
    next->flag_counts.push_back(
        {static_cast<Flag>(static_cast<std::uint32_t>(s.column_int64(1))), s.column_int64(2)});
  }
  return days;
}

Result<std::optional<std::pair<Day, Day>>> stored_day_range(sqlite::Connection& connection,
                                                            SiteKey site) {
  auto select =
      connection.cached("SELECT min(day), max(day) FROM daily_figures WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row || (*select)->column_is_null(0)) return std::optional<std::pair<Day, Day>>{};
  auto first = stored_day(**select, 0);
  if (!first) return std::unexpected(first.error());
  auto last = stored_day(**select, 1);
  if (!last) return std::unexpected(last.error());
  return std::optional<std::pair<Day, Day>>{std::pair{*first, *last}};
}

}  // namespace stagewell::daily
