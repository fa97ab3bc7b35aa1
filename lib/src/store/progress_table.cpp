// `ingest_progress`: how far each source has been read (written by WriteBatch::set_progress, in the
// transaction of the readings it covers).
#include "stagewell/store_tables.hpp"
#include "store/rows.hpp"
#include "store/store_core.hpp"

namespace stagewell {

Result<std::optional<IngestProgress>> ProgressTable::committed(std::string_view source) {
  auto select = core_->db().cached(
      "SELECT file_identity, byte_offset, updated_ms FROM ingest_progress WHERE source = ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, source);
  return store_detail::first_row(**select, [](const auto& s) {
    return IngestProgress{s.column_text(0), s.column_int64(1), s.column_int64(2)};
  });
}

Result<std::vector<SourceProgress>> ProgressTable::latest(std::size_t max_rows) {
  auto select = core_->db().cached(
      "SELECT source, file_identity, byte_offset, updated_ms FROM ingest_progress "
      "ORDER BY updated_ms DESC LIMIT ?1");
  if (!select) return std::unexpected(select.error());
  (*select)->bind(1, store_detail::row_limit(max_rows));
  std::vector<SourceProgress> out;
  auto read = store_detail::each_row(**select, [&](const auto& s) {
    out.push_back(
        {s.column_text(0), IngestProgress{s.column_text(1), s.column_int64(2), s.column_int64(3)}});
  });
  if (!read) return std::unexpected(read.error());
  return out;
}

}  // namespace stagewell
