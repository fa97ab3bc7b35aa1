// The warehouse's schema migrations compiled into the program (schema/warehouse/NNN_name.sql,
// embedded by lib/src/store/embed_schema.cmake), applied by the shipper (shipper.cpp).
#pragma once

#include <span>
#include <string_view>

namespace stagewell::warehouse_detail {

struct Migration {
  int version;            // NNN: schema_migrations.version once applied
  std::string_view name;  // "001_initial", for messages
  std::string_view sql;
};

// In version order 1, 2, ... without gaps (the build checks). Defined in the generated source.
std::span<const Migration> migrations();

}  // namespace stagewell::warehouse_detail
