// Recording configuration versions, so that each stored reading names what produced it.
#include <fmt/format.h>

#include <cstdint>

#include "stagewell/store.hpp"
#include "store/store_impl.hpp"

namespace stagewell {
namespace {

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

Result<ConfigVersionId> Store::record_config(SiteKey site, std::string_view json,
                                             std::int64_t now_ms) {
  constexpr std::string_view doing = "record a configuration version";
  if (auto ok = impl_->require_writable(doing); !ok) return std::unexpected(ok.error());
  if (auto ok = impl_->require_no_batch(doing); !ok) return std::unexpected(ok.error());
  auto& connection = *impl_->connection;
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
  auto row = (*select)->step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return fail(ErrorKind::database, "a configuration version vanished after insert");
  return ConfigVersionId{(*select)->column_int64(0)};
}

}  // namespace stagewell
