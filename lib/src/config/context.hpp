// What the configuration reader carries while it walks the YAML tree: where each value sits (its
// dotted key and its line) and the errors found so far. Reading never stops at an error; every
// reader reports what it finds here and goes on, so that one run lists every mistake in the file.
#pragma once

#include <yaml-cpp/yaml.h>

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// A value in the YAML tree, with the dotted key that names it in messages and the place to cite
// for it (0-based, as yaml-cpp gives it; the value's own place, or its key's when it is empty).
struct At {
  YAML::Node node;
  std::string key;  // "sites[1].section.width"; list indices are 0-based
  YAML::Mark mark;
};

// The value of `name` in the map `map`, when present (the first one, when written twice).
std::optional<At> find(const At& map, std::string_view name);
// The entry `index` of the list `list`. REQUIRES: list.node is a sequence with that many entries.
At element(const At& list, std::size_t index);
// The value `value` written under `key_node` in the map `map`.
At member(const At& map, const YAML::Node& key_node, const YAML::Node& value);

// The value as written, short enough for one line of a message: a scalar as is, a list or map in
// flow style ("[1, 2]"), nothing for an empty value.
std::string written(const YAML::Node& node);

// 1-based line of a place, 0 when unknown.
int line_of(const YAML::Mark& mark);

class Context {
 public:
  Context(std::string file, std::filesystem::path base_dir);

  // An error about the value at `at`, quoting the value as written.
  void error(const At& at, std::string message);
  // An error about a key, quoting no value (a missing or unknown key).
  void key_error(const YAML::Mark& mark, std::string key, std::string message);

  const std::filesystem::path& base_dir() const { return base_dir_; }
  std::size_t error_count() const { return errors_.size(); }
  // The errors in the order of the file (by line, then column).
  std::vector<ConfigError> take_errors();

 private:
  void add(const YAML::Mark& mark, std::string key, std::string value, std::string message);

  std::string file_;
  std::filesystem::path base_dir_;
  std::vector<ConfigError> errors_;
};

}  // namespace stagewell::config_detail
