// `config_versions`: recording configuration versions, so that each stored reading names what
// produced it.
#include <fmt/format.h>

#include <cstdint>

#include "stagewell/store_tables.hpp"
#include "store/depth_terms.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {
namespace {

using store_detail::first_row;

// FNV-1a, 64-bit (Fowler, Noll, Vo): offset basis 0xcbf29ce484222325, prime 0x100000001b3.
// A short, stable name for a configuration text; the text itself decides identity.
std::string fnv1a_64_hex(std::string_view text) {
  std::uint64_t hash = 0xcbf29ce484222325ull;
  for (const char c : text) {
    hash ^= static_cast<unsigned char>(c);
    hash *= 0x100000001b3ull;  // wraps modulo 2^64, as the algorithm specifies
  }
  return fmt::format("{:016x}", hash);
}

}  // namespace

Result<ConfigVersionId> VersionsTable::record(SiteKey site, std::string_view json,
                                              std::int64_t now_ms, const DepthTerms& depth) {
  auto& connection = core_->db();
  return store_detail::in_own_batch(
      *core_, "record a configuration version", [&](WriteBatch&) -> Result<ConfigVersionId> {
        {
          // An existing (site, text) keeps its id and its original created time.
          auto insert = connection.cached(
              "INSERT INTO config_versions (site_key, config_json, hash, created_ms) "
              "VALUES (?1, ?2, ?3, ?4) ON CONFLICT (site_key, config_json) DO NOTHING");
          if (!insert) return std::unexpected(insert.error());
          (*insert)->bind(1, site.value);
          (*insert)->bind(2, json);
          (*insert)->bind(3, std::string_view(fnv1a_64_hex(json)));
          (*insert)->bind(4, now_ms);
          if (auto done = (*insert)->run(); !done) return std::unexpected(done.error());
        }
        auto select = connection.cached(
            "SELECT config_id FROM config_versions WHERE site_key = ?1 AND config_json = ?2");
        if (!select) return std::unexpected(select.error());
        (*select)->bind(1, site.value);
        (*select)->bind(2, json);
        auto id = first_row(**select, [](const auto& s) { return s.column_int64(0); });
        if (!id) return std::unexpected(id.error());
        if (!*id) return fail(ErrorKind::database, "a configuration version vanished after insert");
        // Depth is computed from the version's terms (schema 6), not stored with each reading.
        if (auto terms = store_detail::record_depth_terms(connection, **id, depth); !terms) {
          return std::unexpected(terms.error());
        }
        return ConfigVersionId{**id};
      });
}

Result<std::optional<std::string>> VersionsTable::hash(ConfigVersionId version) {
  auto select = core_->db().cached("SELECT hash FROM config_versions WHERE config_id = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, version.value);
  return first_row(**select, [](const auto& s) { return s.column_text(0); });
}

}  // namespace stagewell
