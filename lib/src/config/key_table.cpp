#include "config/key_table.hpp"

#include <algorithm>
#include <map>

namespace stagewell::config_detail {
namespace {

std::string joined(std::span<const std::pair<std::string_view, const Presence*>> rows) {
  std::string out;
  for (const auto& [name, presence] : rows) {
    if (presence->kind == Presence::Kind::not_here) continue;
    if (!out.empty()) out += ", ";
    out += name;
  }
  return out;
}

std::string dotted(const At& map, std::string_view name) {
  return map.key.empty() ? std::string(name) : map.key + "." + std::string(name);
}

// Edit distance with adjacent transpositions (optimal string alignment), ignoring case:
// "roughnes", "rougness" and "Roughness" are all one edit from "roughness".
std::size_t edit_distance(std::string_view a, std::string_view b) {
  const auto lower = [](char c) { return c >= 'A' && c <= 'Z' ? static_cast<char>(c + 32) : c; };
  std::vector<std::vector<std::size_t>> d(a.size() + 1, std::vector<std::size_t>(b.size() + 1));
  for (std::size_t i = 0; i <= a.size(); ++i) d[i][0] = i;
  for (std::size_t j = 0; j <= b.size(); ++j) d[0][j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t cost = lower(a[i - 1]) == lower(b[j - 1]) ? 0 : 1;
      d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost});
      if (i > 1 && j > 1 && lower(a[i - 1]) == lower(b[j - 2]) &&
          lower(a[i - 2]) == lower(b[j - 1])) {
        d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
      }
    }
  }
  return d[a.size()][b.size()];
}

}  // namespace

std::optional<std::string_view> closest_name(std::string_view name,
                                             std::span<const std::string_view> candidates) {
  // A third of the name's length, at most 3 edits: "sideslope" -> "side_slope" (1 edit) is a
  // typo; "id" -> "in" would be a guess.
  const std::size_t allowed = std::clamp<std::size_t>(name.size() / 3, 1, 3);
  std::optional<std::string_view> best;
  std::size_t best_distance = allowed + 1;
  for (const auto candidate : candidates) {
    const std::size_t distance = edit_distance(name, candidate);
    if (distance < best_distance) {
      best = candidate;
      best_distance = distance;
    }
  }
  return best;
}

std::optional<std::vector<std::optional<At>>> match_keys(
    const At& map, std::span<const std::pair<std::string_view, const Presence*>> rows,
    Context& cx) {
  if (!map.node.IsMap() && !map.node.IsNull()) {
    cx.error(map, "must be a map of `key: value` lines; the keys here are: " + joined(rows));
    return std::nullopt;
  }
  std::vector<std::optional<At>> written(rows.size());
  std::map<std::string, int, std::less<>> first_line;
  if (map.node.IsMap()) {
    for (const auto& pair : map.node) {
      if (!pair.first.IsScalar()) {
        cx.key_error(pair.first.Mark(), map.key, "a key must be a plain name, not a list or map");
        continue;
      }
      const std::string& name = pair.first.Scalar();
      const std::string key = dotted(map, name);
      if (auto seen = first_line.find(name); seen != first_line.end()) {
        cx.key_error(
            pair.first.Mark(), key,
            "written twice (first on line " + std::to_string(seen->second) + "); keep one");
        continue;
      }
      first_line.emplace(name, line_of(pair.first.Mark()));
      const auto row =
          std::find_if(rows.begin(), rows.end(), [&](const auto& r) { return r.first == name; });
      if (row == rows.end()) {
        std::vector<std::string_view> names;
        for (const auto& r : rows) names.push_back(r.first);
        if (auto guess = closest_name(name, names)) {
          cx.key_error(pair.first.Mark(), key,
                       "unknown key; did you mean `" + std::string(*guess) + "`?");
        } else {
          cx.key_error(pair.first.Mark(), key, "unknown key; the keys here are: " + joined(rows));
        }
        continue;
      }
      if (row->second->kind == Presence::Kind::not_here) {
        cx.key_error(pair.first.Mark(), key, row->second->text);
        continue;
      }
      written[static_cast<std::size_t>(row - rows.begin())] = member(map, pair.first, pair.second);
    }
  }
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (!written[i] && rows[i].second->kind == Presence::Kind::required) {
      cx.key_error(map.mark, dotted(map, rows[i].first), "required key is missing");
    }
  }
  return written;
}

At default_value(const At& map, std::string_view name, const Presence& presence) {
  return At{YAML::Load(presence.text), dotted(map, name), YAML::Mark::null_mark()};
}

}  // namespace stagewell::config_detail
