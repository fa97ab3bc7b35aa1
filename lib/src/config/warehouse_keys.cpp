// `warehouse:` the PostgreSQL database the service ships its record to (config.hpp, WarehouseSpec).
#include "config/warehouse_keys.hpp"

#include <libpq-fe.h>
#include <unistd.h>

#include <algorithm>
#include <memory>
#include <string_view>

#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

// libpq's own parser checks the string: a typo is found when the configuration is read, not at
// the first connection. A password in it would be copied into logs and process listings.
std::optional<std::string> connection_string(const At& at, Context& cx) {
  auto value = scalar(at, cx, "a PostgreSQL connection string");
  if (!value) return std::nullopt;
  char* message = nullptr;
  PQconninfoOption* parsed = PQconninfoParse(value->c_str(), &message);
  if (parsed == nullptr) {
    std::string why = message != nullptr ? message : "not a connection string";
    if (message != nullptr) PQfreemem(message);
    while (!why.empty() && (why.back() == '\n' || why.back() == ' ')) why.pop_back();
    cx.error(
        at,
        "not a PostgreSQL connection string (keyword=value pairs or a postgresql:// URI): " + why);
    return std::nullopt;
  }
  bool has_password = false;
  for (const PQconninfoOption* option = parsed; option->keyword != nullptr; ++option) {
    if (std::string_view(option->keyword) == "password" && option->val != nullptr &&
        *option->val != '\0') {
      has_password = true;
    }
  }
  PQconninfoFree(parsed);
  if (has_password) {
    cx.error(at,
             "holds a password; put it in a file of its own and name that file in "
             "warehouse.password_file (the connection string is logged, the password never is)");
    return std::nullopt;
  }
  return value;
}

bool is_schema_start(char c) { return (c >= 'a' && c <= 'z') || c == '_'; }
bool is_schema_char(char c) { return is_schema_start(c) || (c >= '0' && c <= '9'); }

// A PostgreSQL identifier that needs no quoting, so that it reads the same in every query.
std::optional<std::string> schema_name(const At& at, Context& cx) {
  auto value = scalar(at, cx, "a schema name");
  if (!value) return std::nullopt;
  if (value->empty() || value->size() > 63 || !is_schema_start(value->front()) ||
      !std::all_of(value->begin(), value->end(), is_schema_char) || value->starts_with("pg_")) {
    cx.error(at,
             "a schema name is 1 to 63 characters: lower-case letters a-z, digits 0-9 and `_`, "
             "not starting with a digit or `pg_`");
    return std::nullopt;
  }
  return value;
}

bool is_plant_char(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_' ||
         c == '.' || c == '-';
}

bool valid_plant(std::string_view name) {
  return !name.empty() && name.size() <= 64 && std::all_of(name.begin(), name.end(), is_plant_char);
}

std::optional<std::string> plant_name(const At& at, Context& cx) {
  auto value = scalar(at, cx, "a plant name");
  if (!value) return std::nullopt;
  if (!valid_plant(*value)) {
    cx.error(at, "a plant name is 1 to 64 characters: letters A-Z a-z, digits 0-9, `_`, `.`, `-`");
    return std::nullopt;
  }
  return value;
}

// The machine's host name, up to its first dot, as the default plant name.
std::string host_name() {
  char buffer[256] = {};
  if (gethostname(buffer, sizeof buffer - 1) != 0) return "plant";
  std::string name(buffer);
  name = name.substr(0, name.find('.'));
  std::replace_if(
      name.begin(), name.end(), [](char c) { return !is_plant_char(c); }, '-');
  if (name.size() > 64) name.resize(64);
  return valid_plant(name) ? name : "plant";
}

}  // namespace

void read_warehouse(const At& at, Context& cx, Config& config) {
  static const std::vector<Key<WarehouseSpec>> keys{
      {"postgresql", required(),
       into(Read<std::string>(connection_string), &WarehouseSpec::postgresql)},
      {"password_file", optional(), into(file_path(), &WarehouseSpec::password_file)},
      {"schema", defaults("stagewell"),
       into(Read<std::string>(schema_name), &WarehouseSpec::schema)},
      {"plant", optional(), into(Read<std::string>(plant_name), &WarehouseSpec::plant)},
  };
  WarehouseSpec spec;
  read_map(at, keys, cx, spec);
  if (spec.plant.empty()) spec.plant = host_name();
  config.warehouse = spec;
}

}  // namespace stagewell::config_detail
