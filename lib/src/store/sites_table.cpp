// `sites`: the small integer key every other table uses for a site id.
#include <fmt/format.h>

#include "stagewell/store_tables.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {

Result<SiteKey> SitesTable::ensure(std::string_view id) {
  if (id.empty()) return fail(ErrorKind::invalid_argument, "a site id cannot be empty");
  return store_detail::in_own_batch(*core_, "add a site", [&](WriteBatch&) -> Result<SiteKey> {
    auto insert =
        core_->db().cached("INSERT INTO sites (id) VALUES (?1) ON CONFLICT (id) DO NOTHING");
    if (!insert) return std::unexpected(insert.error());
    (*insert)->bind(1, id);
    if (auto done = (*insert)->run(); !done) return std::unexpected(done.error());
    auto key = find(id);
    if (!key) return std::unexpected(key.error());
    if (!*key)
      return fail(ErrorKind::database, fmt::format("site \"{}\" vanished after insert", id));
    return **key;
  });
}

Result<void> SitesTable::describe(const std::vector<SiteSettings>& sites) {
  return store_detail::in_own_batch(*core_, "describe the sites", [&](WriteBatch&) -> Result<void> {
    if (auto cleared = core_->db().exec("DELETE FROM site_settings"); !cleared) return cleared;
    auto insert = core_->db().cached(
        "INSERT INTO site_settings (site_key, name, time_zone, stage_unit, length_unit, "
        "discharge_unit, volume_unit, latitude, longitude, datum) "
        "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)");
    if (!insert) return std::unexpected(insert.error());
    for (const SiteSettings& site : sites) {
      auto& s = **insert;
      s.bind(1, site.site.value);
      s.bind(2, std::string_view(site.name));
      s.bind(3, std::string_view(site.time_zone));
      s.bind(4, std::string_view(site.stage_unit));
      s.bind(5, std::string_view(site.length_unit));
      s.bind(6, std::string_view(site.discharge_unit));
      s.bind(7, std::string_view(site.volume_unit));
      s.bind(8, site.latitude);
      s.bind(9, site.longitude);
      if (site.datum) {
        s.bind(10, std::string_view(*site.datum));
      } else {
        s.bind_null(10);
      }
      if (auto done = s.run(); !done) return done;
      s.reset();
    }
    return {};
  });
}

Result<std::optional<SiteKey>> SitesTable::find(std::string_view id) {
  auto select = core_->db().cached("SELECT site_key FROM sites WHERE id = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, id);
  return store_detail::first_row(**select,
                                 [](const auto& s) { return SiteKey{s.column_int64(0)}; });
}

}  // namespace stagewell
