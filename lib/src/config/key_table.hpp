// The declarative key tables every level of the configuration is read through. A level (the top,
// a site, its section, its stage...) is a table of rows: the key's name, whether it is required or
// its default (written as YAML, exactly as a user would write it), and how its value is read and
// validated (value_readers.hpp) and where it is stored. read_map() checks the keys written against
// the table — unknown keys (with the closest known key suggested), keys written twice, keys that do
// not belong here, required keys that are missing — and then reads each key in TABLE order, so a
// row may rely on the rows above it (a section's shape before its width).
#pragma once

#include <functional>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "config/context.hpp"

namespace stagewell::config_detail {

// Reads one value: reports what is wrong with it and returns nullopt when it cannot be used.
template <typename V>
using Read = std::function<std::optional<V>(const At&, Context&)>;

// Reads one key's value into the structure being filled.
template <typename T>
using Store = std::function<void(const At&, Context&, T&)>;

// Whether a key must be written, and what holds when it is not.
struct Presence {
  enum class Kind {
    required,   // missing: an error
    optional,   // missing: the field keeps its initial value (e.g. an unset std::optional)
    defaulted,  // missing: read as if `text` (YAML, e.g. "6h" or "{}") had been written
    not_here,   // a key of this level that this variant does not use: `text` says why
    ignored,    // known, but not read (the variant could not be determined)
  };
  Kind kind = Kind::required;
  std::string text;
};

inline Presence required() { return {Presence::Kind::required, {}}; }
inline Presence optional() { return {Presence::Kind::optional, {}}; }
inline Presence defaults(std::string_view yaml) {
  return {Presence::Kind::defaulted, std::string(yaml)};
}
inline Presence not_here(std::string reason) {
  return {Presence::Kind::not_here, std::move(reason)};
}
inline Presence ignored() { return {Presence::Kind::ignored, {}}; }

template <typename T>
struct Key {
  std::string_view name;
  Presence presence;
  Store<T> store;
};

// Stores what `read` gives into `member` (a field of type V or std::optional<V>).
template <typename T, typename V, typename F>
Store<T> into(Read<V> read, F T::*member) {
  return [read = std::move(read), member](const At& at, Context& cx, T& out) {
    if (auto value = read(at, cx)) out.*member = std::move(*value);
  };
}

// The closest of `candidates` to a misspelt `name`, when one is close enough to be a likely typo.
std::optional<std::string_view> closest_name(std::string_view name,
                                             std::span<const std::string_view> candidates);

// The part of read_map that does not depend on T: checks the keys written in `map` against the
// table and returns, for each row, the value written for it. Reports every misfit. nullopt when
// `map` is not a map at all (an empty value counts as an empty map).
std::optional<std::vector<std::optional<At>>> match_keys(
    const At& map, std::span<const std::pair<std::string_view, const Presence*>> rows, Context& cx);

// The value a defaulted row is read from when its key is missing.
At default_value(const At& map, std::string_view name, const Presence& presence);

template <typename T>
void read_map(const At& map, std::span<const Key<T>> keys, Context& cx, T& out) {
  std::vector<std::pair<std::string_view, const Presence*>> rows;
  rows.reserve(keys.size());
  for (const auto& key : keys) rows.emplace_back(key.name, &key.presence);
  const auto written = match_keys(map, rows, cx);
  if (!written) return;
  for (std::size_t i = 0; i < keys.size(); ++i) {
    const Key<T>& key = keys[i];
    const auto kind = key.presence.kind;
    if (kind == Presence::Kind::not_here || kind == Presence::Kind::ignored) continue;
    if ((*written)[i]) {
      key.store(*(*written)[i], cx, out);
    } else if (kind == Presence::Kind::defaulted) {
      key.store(default_value(map, key.name, key.presence), cx, out);
    }
  }
}

template <typename T>
void read_map(const At& map, const std::vector<Key<T>>& keys, Context& cx, T& out) {
  read_map(map, std::span<const Key<T>>(keys), cx, out);
}

}  // namespace stagewell::config_detail
