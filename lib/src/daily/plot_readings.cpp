// The readings a hydrograph draws.
#include "stagewell/plot.hpp"

namespace stagewell::plot {

Result<std::vector<PlotReading>> read_plot_readings(sqlite::Connection& connection, SiteKey site,
                                                    std::int64_t from_ms, std::int64_t to_ms) {
  auto select = connection.cached(
      "SELECT time_ms, stage, discharge, flags FROM readings "
      "WHERE site_key = ?1 AND time_ms >= ?2 AND time_ms < ?3 ORDER BY time_ms");
  if (!select) return std::unexpected(select.error());
  auto& s = **select;
  s.bind(1, site.value);
  s.bind(2, from_ms);
  s.bind(3, to_ms);
  std::vector<PlotReading> readings;
  for (;;) {
    auto row = s.step();
    if (!row) return std::unexpected(row.error());
    if (!*row) break;
    readings.push_back({s.column_int64(0), s.column_double(1), s.column_optional_double(2),
                        Flags(static_cast<std::uint32_t>(s.column_int64(3)))});
  }
  return readings;
}

}  // namespace stagewell::plot
