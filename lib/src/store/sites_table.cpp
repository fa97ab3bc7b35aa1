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

Result<std::optional<SiteKey>> SitesTable::find(std::string_view id) {
  auto select = core_->db().cached("SELECT site_key FROM sites WHERE id = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, id);
  return store_detail::first_row(**select,
                                 [](const auto& s) { return SiteKey{s.column_int64(0)}; });
}

}  // namespace stagewell
