// The daily tables of schema/002_daily.sql: figures, flag counts and the settings they were
// computed with.
#include "stagewell/daily_table.hpp"

#include <fmt/format.h>

#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {

using daily::Day;
using daily::DayFigures;
using store_detail::bind_optional;
using store_detail::each_row;
using store_detail::first_row;
using store_detail::optional_int64;

namespace {

// Runs `sql` with the site and, when given, the day as its parameters ?1 and ?2.
Result<void> run_for(sqlite::Connection& connection, std::string_view sql, SiteKey site,
                     std::optional<std::string_view> day = std::nullopt) {
  auto statement = connection.cached(sql);
  if (!statement) return std::unexpected(statement.error());
  (*statement)->bind(1, site.value);
  if (day) (*statement)->bind(2, *day);
  return (*statement)->run();
}

Result<void> delete_day(sqlite::Connection& connection, SiteKey site, std::string_view day) {
  for (const char* sql : {"DELETE FROM daily_flag_counts WHERE site_key = ?1 AND day = ?2",
                          "DELETE FROM daily_figures WHERE site_key = ?1 AND day = ?2"}) {
    if (auto done = run_for(connection, sql, site, day); !done) return done;
  }
  return {};
}

Result<void> upsert_figures(sqlite::Connection& connection, SiteKey site, std::string_view day,
                            const DayFigures& f) {
  auto upsert = connection.cached(
      "INSERT INTO daily_figures (site_key, day, start_ms, end_ms, volume, mean_discharge, "
      "min_discharge, min_time_ms, max_discharge, max_time_ms, covered_ms, coverage, readings, "
      "flagged, volume_low, volume_high) "
      "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16) "
      "ON CONFLICT (site_key, day) DO UPDATE SET start_ms = excluded.start_ms, "
      "end_ms = excluded.end_ms, volume = excluded.volume, "
      "mean_discharge = excluded.mean_discharge, min_discharge = excluded.min_discharge, "
      "min_time_ms = excluded.min_time_ms, max_discharge = excluded.max_discharge, "
      "max_time_ms = excluded.max_time_ms, covered_ms = excluded.covered_ms, "
      "coverage = excluded.coverage, readings = excluded.readings, flagged = excluded.flagged, "
      "volume_low = excluded.volume_low, volume_high = excluded.volume_high");
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
  s.bind(15, f.volume_low);
  s.bind(16, f.volume_high);
  return s.run();
}

Result<void> replace_flag_counts(sqlite::Connection& connection, SiteKey site, std::string_view day,
                                 const DayFigures& f) {
  if (auto done = run_for(
          connection, "DELETE FROM daily_flag_counts WHERE site_key = ?1 AND day = ?2", site, day);
      !done) {
    return done;
  }
  for (const daily::FlagCount& count : f.flag_counts) {
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
  const auto day = daily::parse_day(text);
  if (!day) {
    return fail(ErrorKind::database, fmt::format("daily_figures holds a malformed day '{}'", text));
  }
  return *day;
}

// The figures of one row of the SELECT in DailyTable::days() (without flag counts).
Result<DayFigures> figures_row(const sqlite::Statement& s) {
  auto day = stored_day(s, 0);
  if (!day) return std::unexpected(day.error());
  DayFigures f;
  f.day = *day;
  f.start_ms = s.column_int64(1);
  f.end_ms = s.column_int64(2);
  f.volume = s.column_optional_double(3);
  f.mean_discharge = s.column_optional_double(4);
  f.min_discharge = s.column_optional_double(5);
  f.min_time_ms = optional_int64(s, 6);
  f.max_discharge = s.column_optional_double(7);
  f.max_time_ms = optional_int64(s, 8);
  f.covered_ms = s.column_int64(9);
  f.coverage = s.column_double(10);
  f.readings = s.column_int64(11);
  f.flagged = s.column_int64(12);
  f.volume_low = s.column_optional_double(13);
  f.volume_high = s.column_optional_double(14);
  return f;
}

// Binds the site and the day range [first, last] as ?1, ?2, ?3.
void bind_days(sqlite::Statement& s, SiteKey site, const std::string& first,
               const std::string& last) {
  s.bind(1, site.value);
  s.bind(2, std::string_view(first));
  s.bind(3, std::string_view(last));
}

}  // namespace

Result<void> DailyTable::write_day(WriteBatch& batch, SiteKey site, const DayFigures& figures) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        const std::string day = daily::format_day(figures.day);
        if (figures.empty()) return delete_day(connection, site, day);
        if (auto done = upsert_figures(connection, site, day, figures); !done) return done;
        return replace_flag_counts(connection, site, day, figures);
      });
}

Result<void> DailyTable::erase_site(WriteBatch& batch, SiteKey site) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        for (const char* sql : {"DELETE FROM daily_flag_counts WHERE site_key = ?1",
                                "DELETE FROM daily_figures WHERE site_key = ?1"}) {
          if (auto done = run_for(connection, sql, site); !done) return done;
        }
        return {};
      });
}

Result<std::vector<DayFigures>> DailyTable::days(SiteKey site, Day from, Day to) {
  const std::string first = daily::format_day(from);
  const std::string last = daily::format_day(to);
  std::vector<DayFigures> days;
  std::optional<Error> malformed;
  {
    auto select = core_->db().cached(
        "SELECT day, start_ms, end_ms, volume, mean_discharge, min_discharge, min_time_ms, "
        "max_discharge, max_time_ms, covered_ms, coverage, readings, flagged, volume_low, "
        "volume_high FROM daily_figures "
        "WHERE site_key = ?1 AND day >= ?2 AND day <= ?3 ORDER BY day");
    if (!select) return std::unexpected(select.error());
    bind_days(**select, site, first, last);
    auto read = each_row(**select, [&](const auto& s) {
      auto figures = figures_row(s);
      if (figures) {
        days.push_back(std::move(*figures));
      } else if (!malformed) {
        malformed = figures.error();
      }
    });
    if (!read) return std::unexpected(read.error());
    if (malformed) return std::unexpected(*malformed);
  }
  auto select = core_->db().cached(
      "SELECT day, bit, readings FROM daily_flag_counts "
      "WHERE site_key = ?1 AND day >= ?2 AND day <= ?3 ORDER BY day, bit");
  if (!select) return std::unexpected(select.error());
  bind_days(**select, site, first, last);
  auto next = days.begin();
  auto read = each_row(**select, [&](const auto& s) {
    auto day = stored_day(s, 0);
    if (!day) {
      if (!malformed) malformed = day.error();
      return;
    }
    while (next != days.end() && next->day < *day) ++next;
    if (next == days.end() || next->day != *day) return;  // counts without figures: ignored
    next->flag_counts.push_back(
        {static_cast<Flag>(static_cast<std::uint32_t>(s.column_int64(1))), s.column_int64(2)});
  });
  if (!read) return std::unexpected(read.error());
  if (malformed) return std::unexpected(*malformed);
  return days;
}

Result<std::optional<std::pair<Day, Day>>> DailyTable::day_range(SiteKey site) {
  using Range = std::optional<std::pair<Day, Day>>;
  auto select =
      core_->db().cached("SELECT min(day), max(day) FROM daily_figures WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  auto row = first_row(**select, [](const auto& s) -> Result<Range> {
    if (s.column_is_null(0)) return Range{};
    auto first = stored_day(s, 0);
    if (!first) return std::unexpected(first.error());
    auto last = stored_day(s, 1);
    if (!last) return std::unexpected(last.error());
    return Range{std::pair{*first, *last}};
  });
  if (!row) return std::unexpected(row.error());
  if (!*row) return Range{};
  return **row;
}

Result<std::optional<std::string>> DailyTable::settings(SiteKey site) {
  auto select = core_->db().cached("SELECT settings FROM daily_settings WHERE site_key = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, site.value);
  return first_row(**select, [](const auto& s) { return s.column_text(0); });
}

Result<void> DailyTable::set_settings(WriteBatch& batch, SiteKey site, std::string_view settings) {
  return store_detail::BatchAccess::write(
      batch, core_, [&](sqlite::Connection& connection) -> Result<void> {
        auto upsert = connection.cached(
            "INSERT INTO daily_settings (site_key, settings) VALUES (?1, ?2) "
            "ON CONFLICT (site_key) DO UPDATE SET settings = excluded.settings");
        if (!upsert) return std::unexpected(upsert.error());
        (*upsert)->bind(1, site.value);
        (*upsert)->bind(2, settings);
        return (*upsert)->run();
      });
}

}  // namespace stagewell
