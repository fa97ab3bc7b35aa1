// Where readings come from (`sources:`) and where the service logs to (`log:`).
#include <fmt/format.h>

#include "config/key_table.hpp"
#include "config/readers.hpp"
#include "config/tcp_source_keys.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

Read<SourceSpec::Type> source_type() {
  return [](const At& at, Context& cx) -> std::optional<SourceSpec::Type> {
    const auto name = one_of({"directory", "tail", "tcp"})(at, cx);
    if (!name) return std::nullopt;
    if (*name == "tcp") return SourceSpec::Type::tcp;
    return *name == "directory" ? SourceSpec::Type::directory : SourceSpec::Type::tail;
  };
}

// The type written for a source, when it can be read: which keys apply depends on it.
std::optional<SourceSpec::Type> written_type(const At& entry) {
  const auto written = find(entry, "type");
  if (!written || !written->node.IsScalar()) return std::nullopt;
  const std::string& name = written->node.Scalar();
  if (name == "directory") return SourceSpec::Type::directory;
  if (name == "tail") return SourceSpec::Type::tail;
  if (name == "tcp") return SourceSpec::Type::tcp;
  return std::nullopt;
}

const std::vector<Key<ColumnNames>>& column_keys() {
  static const std::vector<Key<ColumnNames>> keys{
      {"site", defaults("site"), into(text(), &ColumnNames::site)},
      {"time", defaults("time"), into(text(), &ColumnNames::time)},
      {"stage", defaults("stage"), into(text(), &ColumnNames::stage)},
  };
  return keys;
}

// The header names of the CSV fields. A source that names its site has no site column, so a
// `columns.site` there is a contradiction rather than something to ignore silently.
void read_columns(const At& at, Context& cx, SourceSpec& out) {
  read_map(at, column_keys(), cx, out.columns);
  const auto site_column = find(at, "site");
  if (out.site && site_column) {
    cx.error(*site_column, fmt::format("not used: this source has `site: {}`, so its lines have "
                                       "no site column; remove one of the two",
                                       *out.site));
  }
  const auto time_column = find(at, "time");
  const auto stage_column = find(at, "stage");
  if (out.columns.time == out.columns.stage && stage_column) {
    cx.error(*stage_column, "must differ from the time column");
  }
  if (!out.site && out.columns.site == out.columns.time && time_column) {
    cx.error(*time_column, "must differ from the site column");
  }
  if (!out.site && out.columns.site == out.columns.stage && stage_column) {
    cx.error(*stage_column, "must differ from the site column");
  }
}

// The rows of a source of `type`: a tcp source has no path, a file source none of the tcp keys
// (tcp_source_keys.cpp). When the type cannot be read, those keys are checked for spelling only.
std::vector<Key<SourceSpec>> source_keys(std::optional<SourceSpec::Type> type) {
  const bool tcp = type == SourceSpec::Type::tcp;
  const auto presence = [&](bool used, Presence when_used, std::string_view users) {
    if (!type) return ignored();
    return used ? when_used : not_here(fmt::format("not used by this type of source ({})", users));
  };
  // `site` before `columns`: read_columns needs to know whether the source names its site.
  std::vector<Key<SourceSpec>> keys{
      {"type", required(), into(source_type(), &SourceSpec::type)},
      {"path", presence(!tcp, required(), "only by directory and tail; tcp listens instead"),
       into(file_path(), &SourceSpec::path)},
      {"site", optional(), into(identifier(), &SourceSpec::site)},
      {"columns", defaults("{}"), read_columns},
      {"time_zone", optional(), into(time_zone(), &SourceSpec::time_zone)},
      {"stage_units", optional(), into(length_unit(), &SourceSpec::stage_units)},
  };
  for (const auto& key : tcp_source_keys()) {
    keys.push_back({key.name, presence(tcp, key.presence, "only by tcp"), key.store});
  }
  return keys;
}

std::string site_ids(const Config& config) {
  std::string out;
  for (const auto& site : config.sites) out += (out.empty() ? "" : ", ") + site.id;
  return out;
}

// Two sources on one path would ingest the same readings twice; so would a tail on a file inside
// a drop folder.
void check_paths(const At& list, Context& cx, const std::vector<SourceSpec>& sources,
                 const std::vector<std::size_t>& index_of) {
  for (std::size_t j = 0; j < sources.size(); ++j) {
    const auto path = find(element(list, index_of[j]), "path");
    if (!path) continue;
    for (std::size_t i = 0; i < j; ++i) {
      const auto& earlier = sources[i];
      if (earlier.path == sources[j].path) {
        cx.error(*path, fmt::format("the same path as sources[{}]; each path may be read by one "
                                    "source only",
                                    index_of[i]));
        break;
      }
      const bool tail_in_folder = (earlier.type == SourceSpec::Type::directory &&
                                   sources[j].type == SourceSpec::Type::tail &&
                                   sources[j].path.parent_path() == earlier.path) ||
                                  (earlier.type == SourceSpec::Type::tail &&
                                   sources[j].type == SourceSpec::Type::directory &&
                                   earlier.path.parent_path() == sources[j].path);
      if (tail_in_folder) {
        cx.error(*path, fmt::format("a tail source's file lies in the drop folder of another "
                                    "source (sources[{}]): its lines would be read twice",
                                    index_of[i]));
        break;
      }
    }
  }
}

}  // namespace

void read_sources(const At& at, Context& cx, Config& config) {
  if (at.node.IsNull()) return;
  if (!at.node.IsSequence()) {
    cx.error(at, "must be a list of sources, each starting with `- type:`");
    return;
  }
  std::vector<std::size_t> index_of;  // each read source's place in the list
  for (std::size_t i = 0; i < at.node.size(); ++i) {
    const At entry = element(at, i);
    const std::size_t before = cx.error_count();
    SourceSpec source;
    const auto type = written_type(entry);
    read_map(entry, source_keys(type), cx, source);
    if (type == SourceSpec::Type::tcp) check_tcp_source(entry, cx, source);
    if (source.site && !config.find_site(*source.site)) {
      if (const auto site = find(entry, "site")) {
        cx.error(*site, "no site has this id; the sites are: " + site_ids(config));
      }
    }
    source.line = line_of(entry.mark);
    if (cx.error_count() != before) continue;
    config.sources.push_back(std::move(source));
    index_of.push_back(i);
  }
  check_paths(at, cx, config.sources, index_of);
  check_listeners(at, cx, config.sources, index_of);
}

void read_log(const At& at, Context& cx, LogSpec& out) {
  static const std::vector<Key<LogSpec>> keys{
      {"file", optional(), into(file_path(), &LogSpec::file)},
      {"level", defaults("info"),
       into(one_of({"trace", "debug", "info", "warn", "error"}), &LogSpec::level)},
  };
  read_map(at, keys, cx, out);
}

}  // namespace stagewell::config_detail
