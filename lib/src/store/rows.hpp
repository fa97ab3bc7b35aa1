// Reading the rows of a statement: the loops every query of the store's tables shares.
#pragma once

#include <algorithm>
#include <cstdint>
#include <optional>
#include <type_traits>
#include <utility>

#include "stagewell/flags.hpp"
#include "stagewell/uncertainty.hpp"
#include "store/sqlite.hpp"

namespace stagewell::store_detail {

// Steps `statement` to its end, calling `take(statement)` for each row.
template <typename Take>
Result<void> each_row(sqlite::Statement& statement, Take&& take) {
  for (;;) {
    auto row = statement.step();
    if (!row) return std::unexpected(row.error());
    if (!*row) return {};
    take(static_cast<const sqlite::Statement&>(statement));
  }
}

// `read(statement)` of the first row; nullopt when there is none.
template <typename Read>
auto first_row(sqlite::Statement& statement, Read&& read)
    -> Result<std::optional<std::invoke_result_t<Read, const sqlite::Statement&>>> {
  using Row = std::invoke_result_t<Read, const sqlite::Statement&>;
  auto row = statement.step();
  if (!row) return std::unexpected(row.error());
  if (!*row) return std::optional<Row>{};
  return std::optional<Row>(read(static_cast<const sqlite::Statement&>(statement)));
}

// The one integer a count(*) gives; 0 when there is no row.
inline Result<std::int64_t> single_count(sqlite::Statement& statement) {
  auto count = first_row(statement, [](const auto& s) { return s.column_int64(0); });
  if (!count) return std::unexpected(count.error());
  return count->value_or(0);
}

// A column that may be NULL.
inline std::optional<std::int64_t> optional_int64(const sqlite::Statement& s, int column) {
  if (s.column_is_null(column)) return std::nullopt;
  return s.column_int64(column);
}

// A row count as a LIMIT parameter.
inline std::int64_t row_limit(std::size_t rows) {
  return static_cast<std::int64_t>(std::min<std::size_t>(rows, INT64_MAX));
}

inline Flags flags_column(const sqlite::Statement& s, int column) {
  return Flags(static_cast<std::uint32_t>(s.column_int64(column)));
}

// A whole number that may be NULL, bound.
inline void bind_optional(sqlite::Statement& s, int index, std::optional<std::int64_t> value) {
  if (value) {
    s.bind(index, *value);
  } else {
    s.bind_null(index);
  }
}

// A reading's band and Jones estimate as the readings table keeps them, in whole basis points
// (uncertainty.hpp), and back.
inline std::optional<std::int64_t> band_bp(std::optional<double> band) {
  if (!band) return std::nullopt;
  return band_to_bp(*band);
}
inline std::optional<std::int64_t> jones_bp(std::optional<double> discharge,
                                            std::optional<double> jones) {
  if (!jones || !discharge || !(*discharge > 0.0)) return std::nullopt;
  return jones_to_bp(*discharge, *jones);
}
inline std::optional<double> band_column(const sqlite::Statement& s, int column) {
  if (s.column_is_null(column)) return std::nullopt;
  return band_from_bp(s.column_int64(column));
}
inline std::optional<double> jones_column(const sqlite::Statement& s, int discharge_column,
                                          int column) {
  if (s.column_is_null(column) || s.column_is_null(discharge_column)) return std::nullopt;
  return jones_from_bp(s.column_double(discharge_column), s.column_int64(column));
}

}  // namespace stagewell::store_detail
