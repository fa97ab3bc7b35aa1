#include "config/value_readers.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <utility>

#include "config/time_zone_name.hpp"

namespace stagewell::config_detail {
namespace {

std::string show(double value, bool seconds) {
  return seconds ? fmt::format("{}s", value) : fmt::format("{}", value);
}

// Strict: the whole text must be the number ("2.4", "-0.5", "1e-3", "+3"); "2.4m" or "two" is not.
std::optional<double> parse_number(std::string_view text) {
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  double value = 0.0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec != std::errc() || end != text.data() + text.size() || text.empty()) return std::nullopt;
  return value;
}

bool is_id_character(char c) {
  return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '_' ||
         c == '.' || c == '-';
}

// Site ids appear in URLs, metric labels and database rows: short and plain.
constexpr std::size_t kLongestId = 64;

}  // namespace

Bounds Bounds::at_most(double limit) const {
  Bounds out = *this;
  out.high = limit;
  out.high_inclusive = true;
  return out;
}

bool Bounds::contains(double value) const {
  if (low && (low_inclusive ? value < *low : value <= *low)) return false;
  if (high && (high_inclusive ? value > *high : value >= *high)) return false;
  return true;
}

std::string Bounds::describe(bool seconds) const {
  if (low && high && low_inclusive && high_inclusive) {
    return "from " + show(*low, seconds) + " to " + show(*high, seconds);
  }
  std::string out;
  if (low) out += (low_inclusive ? "at least " : "greater than ") + show(*low, seconds);
  if (low && high) out += " and ";
  if (high) out += (high_inclusive ? "at most " : "less than ") + show(*high, seconds);
  return out.empty() ? "any number" : out;
}

std::optional<std::string> scalar(const At& at, Context& cx, std::string_view expected) {
  switch (at.node.Type()) {
    case YAML::NodeType::Scalar:
      return at.node.Scalar();
    case YAML::NodeType::Sequence:
      cx.error(at, "must be " + std::string(expected) + ", not a list");
      return std::nullopt;
    case YAML::NodeType::Map:
      cx.error(at, "must be " + std::string(expected) + ", not a map");
      return std::nullopt;
    default:
      cx.error(at, "has no value; must be " + std::string(expected));
      return std::nullopt;
  }
}

std::optional<double> number_value(const At& at, Context& cx, const Bounds& bounds) {
  const auto text = scalar(at, cx, "a number");
  if (!text) return std::nullopt;
  const auto value = parse_number(*text);
  if (!value) {
    // YAML's own spellings of infinity and not-a-number, and a decimal comma, get a precise hint.
    const bool yaml_special =
        text->find(".inf") != std::string::npos || text->find(".Inf") != std::string::npos ||
        text->find(".INF") != std::string::npos || text->find(".nan") != std::string::npos ||
        text->find(".NaN") != std::string::npos || text->find(".NAN") != std::string::npos;
    if (yaml_special) {
      cx.error(at, "must be a finite number");
    } else if (text->find(',') != std::string::npos) {
      cx.error(at, "must be a number, with a point for decimals (1.5, not 1,5)");
    } else {
      cx.error(at, "must be a number");
    }
    return std::nullopt;
  }
  if (!std::isfinite(*value)) {
    cx.error(at, "must be a finite number");
    return std::nullopt;
  }
  if (!bounds.contains(*value)) {
    cx.error(at, "must be " + bounds.describe());
    return std::nullopt;
  }
  return value;
}

Read<double> number(Bounds bounds) {
  return [bounds](const At& at, Context& cx) { return number_value(at, cx, bounds); };
}

Read<int> whole_number(int low, int high) {
  return [low, high](const At& at, Context& cx) -> std::optional<int> {
    const auto text = scalar(at, cx, "a whole number");
    if (!text) return std::nullopt;
    int value = 0;
    const auto [end, ec] = std::from_chars(text->data(), text->data() + text->size(), value);
    if (ec != std::errc() || end != text->data() + text->size()) {
      cx.error(at, "must be a whole number");
      return std::nullopt;
    }
    if (value < low || value > high) {
      cx.error(at, "must be from " + std::to_string(low) + " to " + std::to_string(high));
      return std::nullopt;
    }
    return value;
  };
}

Read<std::string> text() {
  return [](const At& at, Context& cx) -> std::optional<std::string> {
    auto value = scalar(at, cx, "text");
    if (value && value->empty()) {
      cx.error(at, "must not be empty");
      return std::nullopt;
    }
    return value;
  };
}

Read<std::string> identifier() {
  return [](const At& at, Context& cx) -> std::optional<std::string> {
    auto value = scalar(at, cx, "a site id");
    if (!value) return std::nullopt;
    if (value->empty() || value->size() > kLongestId ||
        !std::all_of(value->begin(), value->end(), is_id_character)) {
      cx.error(at, "a site id is 1 to 64 characters: letters A-Z a-z, digits 0-9, `_`, `.`, `-`");
      return std::nullopt;
    }
    return value;
  };
}

Read<std::string> one_of(std::vector<std::string_view> choices) {
  return [choices = std::move(choices)](const At& at, Context& cx) -> std::optional<std::string> {
    std::string list;
    for (const auto choice : choices) list += (list.empty() ? "" : ", ") + std::string(choice);
    auto value = scalar(at, cx, "one of " + list);
    if (!value) return std::nullopt;
    if (std::find(choices.begin(), choices.end(), *value) == choices.end()) {
      cx.error(at, "must be one of " + list);
      return std::nullopt;
    }
    return value;
  };
}

Read<units::System> unit_system() {
  return [](const At& at, Context& cx) -> std::optional<units::System> {
    const auto value = one_of({"metric", "us"})(at, cx);
    return value ? units::parse_system(*value) : std::nullopt;
  };
}

Read<units::Length> length_unit() {
  return [](const At& at, Context& cx) -> std::optional<units::Length> {
    const auto value = scalar(at, cx, "a length unit");
    if (!value) return std::nullopt;
    auto unit = units::parse_length(*value);
    if (!unit) cx.error(at, "unknown unit; choose one of " + units::length_choices());
    return unit;
  };
}

Read<double> duration(Bounds seconds) {
  return [seconds](const At& at, Context& cx) -> std::optional<double> {
    const auto value = scalar(at, cx, "a duration");
    if (!value) return std::nullopt;
    const auto parsed = parse_duration(*value);
    if (!parsed) {
      cx.error(at,
               "must be a duration: numbers with units d, h, m, s, largest first, e.g. 90s, 15m, "
               "2h, 1d, 1h30m");
      return std::nullopt;
    }
    if (!seconds.contains(*parsed)) {
      cx.error(at, "must be " + seconds.describe(true));
      return std::nullopt;
    }
    return parsed;
  };
}

Read<double> percent(Bounds percents) {
  return [percents](const At& at, Context& cx) -> std::optional<double> {
    const auto value = scalar(at, cx, "a percentage");
    if (!value) return std::nullopt;
    // The % is required: a bare 0.1 could mean 0.1 % or 10 %.
    std::string_view text = *value;
    while (!text.empty() && text.back() == ' ') text.remove_suffix(1);
    if (text.empty() || text.back() != '%') {
      cx.error(at, "must be a percentage written with its %, e.g. 10%");
      return std::nullopt;
    }
    text.remove_suffix(1);
    while (!text.empty() && text.back() == ' ') text.remove_suffix(1);
    const auto number = parse_number(text);
    if (!number || !std::isfinite(*number)) {
      cx.error(at, "must be a percentage written with its %, e.g. 10%");
      return std::nullopt;
    }
    if (!percents.contains(*number)) {
      cx.error(at, "must be " + percents.describe() + " %");
      return std::nullopt;
    }
    return *number / 100.0;
  };
}

Read<std::filesystem::path> file_path() {
  return [](const At& at, Context& cx) -> std::optional<std::filesystem::path> {
    const auto value = text()(at, cx);
    if (!value) return std::nullopt;
    const std::filesystem::path path(*value);
    // Relative to the configuration file, so that a configuration means the same wherever the
    // service is started from.
    auto resolved = (path.is_absolute() ? path : cx.base_dir() / path).lexically_normal();
    // "incoming/" and "incoming" are one folder: compared as the same path.
    if (!resolved.has_filename() && resolved.has_relative_path()) resolved = resolved.parent_path();
    return resolved;
  };
}

Read<std::string> time_zone() {
  return [](const At& at, Context& cx) -> std::optional<std::string> {
    auto value = scalar(at, cx, "a time zone");
    if (!value) return std::nullopt;
    if (!is_time_zone(*value)) {
      cx.error(at,
               "unknown time zone; write an IANA name such as America/Denver or UTC, or a fixed "
               "offset such as -07:00, +05:30 or Z");
      return std::nullopt;
    }
    return value;
  };
}

}  // namespace stagewell::config_detail
