#include "config/context.hpp"

#include <algorithm>
#include <utility>

namespace stagewell::config_detail {
namespace {

// A message quotes at most this many characters of a value: enough to recognise it.
constexpr std::size_t kLongestQuote = 60;

void append_written(const YAML::Node& node, std::string& out) {
  switch (node.Type()) {
    case YAML::NodeType::Scalar:
      out += node.Scalar();
      break;
    case YAML::NodeType::Sequence: {
      out += '[';
      bool first = true;
      for (const auto& entry : node) {
        if (!first) out += ", ";
        first = false;
        append_written(entry, out);
      }
      out += ']';
      break;
    }
    case YAML::NodeType::Map: {
      out += '{';
      bool first = true;
      for (const auto& pair : node) {
        if (!first) out += ", ";
        first = false;
        append_written(pair.first, out);
        out += ": ";
        append_written(pair.second, out);
      }
      out += '}';
      break;
    }
    default:  // Null, Undefined: nothing was written
      break;
  }
}

}  // namespace

std::optional<At> find(const At& map, std::string_view name) {
  if (!map.node.IsMap()) return std::nullopt;
  for (const auto& pair : map.node) {
    if (pair.first.IsScalar() && pair.first.Scalar() == name) {
      return member(map, pair.first, pair.second);
    }
  }
  return std::nullopt;
}

At element(const At& list, std::size_t index) {
  const YAML::Node entry = list.node[index];
  const YAML::Mark mark = entry.IsNull() || entry.Mark().is_null() ? list.mark : entry.Mark();
  return At{entry, list.key + "[" + std::to_string(index) + "]", mark};
}

At member(const At& map, const YAML::Node& key_node, const YAML::Node& value) {
  // yaml-cpp places an empty value at the start of the next line; the key is where the reader
  // should look.
  const YAML::Mark mark = value.IsNull() || value.Mark().is_null() ? key_node.Mark() : value.Mark();
  std::string key = map.key.empty() ? key_node.Scalar() : map.key + "." + key_node.Scalar();
  return At{value, std::move(key), mark};
}

std::string written(const YAML::Node& node) {
  std::string out;
  append_written(node, out);
  std::replace(out.begin(), out.end(), '\n', ' ');
  if (out.size() > kLongestQuote) out = out.substr(0, kLongestQuote - 3) + "...";
  return out;
}

int line_of(const YAML::Mark& mark) { return mark.is_null() ? 0 : mark.line + 1; }

Context::Context(std::string file, std::filesystem::path base_dir)
    : file_(std::move(file)), base_dir_(std::move(base_dir)) {}

void Context::error(const At& at, std::string message) {
  add(at.mark, at.key, written(at.node), std::move(message));
}

void Context::key_error(const YAML::Mark& mark, std::string key, std::string message) {
  add(mark, std::move(key), {}, std::move(message));
}

void Context::add(const YAML::Mark& mark, std::string key, std::string value, std::string message) {
  ConfigError error;
  error.file = file_;
  error.line = line_of(mark);
  error.column = mark.is_null() ? 0 : mark.column + 1;
  error.key = std::move(key);
  error.value = std::move(value);
  error.message = std::move(message);
  errors_.push_back(std::move(error));
}

std::vector<ConfigError> Context::take_errors() {
  std::stable_sort(errors_.begin(), errors_.end(), [](const auto& a, const auto& b) {
    return std::pair(a.line, a.column) < std::pair(b.line, b.column);
  });
  return std::move(errors_);
}

}  // namespace stagewell::config_detail

namespace stagewell {

std::string ConfigError::to_string() const {
  std::string out = file;
  if (line > 0) out += ":" + std::to_string(line);
  if (line > 0 && column > 0) out += ":" + std::to_string(column);
  out += ": ";
  if (!key.empty()) {
    out += key;
    if (!value.empty()) out += " = " + value;
    out += ": ";
  }
  out += message;
  return out;
}

}  // namespace stagewell
