// The top level of the configuration, and the two ways in: a file, or text.
#include <fmt/format.h>
#include <yaml-cpp/eventhandler.h>

#include <cerrno>
#include <cstring>
#include <fstream>
#include <sstream>

#include "config/http_keys.hpp"
#include "config/warehouse_keys.hpp"
#include "config/key_table.hpp"
#include "config/readers.hpp"
#include "config/value_readers.hpp"

namespace stagewell {
namespace {

using namespace config_detail;

// `daily.flagged`: one optional key per flag name, include | exclude | bridge (config.hpp,
// DailySpec). Unknown flag names are errors like any unknown key.
void read_flag_treatments(const At& at, Context& cx, DailySpec& out) {
  std::vector<Key<DailySpec>> keys;
  for (const Flag flag : all_flags()) {
    keys.push_back({name(flag), optional(), [flag](const At& value, Context& c, DailySpec& spec) {
                      const auto choice = one_of({"include", "exclude", "bridge"})(value, c);
                      if (!choice) return;
                      if (flag == Flag::out_of_range && *choice == "include") {
                        c.error(value,
                                "out_of_range readings have no discharge to include: "
                                "write exclude or bridge");
                        return;
                      }
                      spec.excluded.clear(flag);
                      spec.bridged.clear(flag);
                      if (*choice == "exclude") spec.excluded.set(flag);
                      if (*choice == "bridge") spec.bridged.set(flag);
                    }});
  }
  read_map(at, keys, cx, out);
}

// `daily:`: the water year and the treatment of flagged readings in the daily figures.
void read_daily(const At& at, Context& cx, Config& config) {
  static const std::vector<Key<DailySpec>> keys{
      {"water_year_start", defaults("10"),
       into(whole_number(1, 12), &DailySpec::water_year_start_month)},
      {"flagged", defaults("{}"), read_flag_treatments},
  };
  read_map(at, keys, cx, config.daily);
}

const std::vector<Key<Config>>& top_keys() {
  // Table order is reading order: `units` before `sites` (a site's stage units default to the
  // system's length unit), `sites` before `sources` (a source may name a site). `units` has no
  // default: reading feet as metres would be silently wrong by a factor of 3.3.
  static const std::vector<Key<Config>> keys{
      {"units", required(), into(unit_system(), &Config::units)},
      {"database", required(), into(file_path(), &Config::database)},
      {"timezone", defaults("UTC"), into(time_zone(), &Config::timezone)},
      {"log", defaults("{}"),
       [](const At& at, Context& cx, Config& config) { read_log(at, cx, config.log); }},
      {"sites", required(), read_sites},
      {"sources", defaults("[]"), read_sources},
      {"daily", defaults("{}"), read_daily},
      {"http", optional(), read_http},  // http: no server unless written
      {"warehouse", optional(), read_warehouse},  // warehouse: nothing shipped unless written
  };
  return keys;
}

ConfigError whole_file_error(std::string file, int line, int column, std::string message) {
  ConfigError error;
  error.file = std::move(file);
  error.line = line;
  error.column = column;
  error.message = std::move(message);
  return error;
}

// Where each YAML document starts; the events inside are not needed.
class DocumentStarts : public YAML::EventHandler {
 public:
  std::vector<YAML::Mark> starts;
  void OnDocumentStart(const YAML::Mark& mark) override { starts.push_back(mark); }
  void OnDocumentEnd() override {}
  void OnNull(const YAML::Mark&, YAML::anchor_t) override {}
  void OnAlias(const YAML::Mark&, YAML::anchor_t) override {}
  void OnScalar(const YAML::Mark&, const std::string&, YAML::anchor_t,
                const std::string&) override {}
  void OnSequenceStart(const YAML::Mark&, const std::string&, YAML::anchor_t,
                       YAML::EmitterStyle::value) override {}
  void OnSequenceEnd() override {}
  void OnMapStart(const YAML::Mark&, const std::string&, YAML::anchor_t,
                  YAML::EmitterStyle::value) override {}
  void OnMapEnd() override {}
};

ConfigResult read_text(std::string_view yaml_text, const std::string& file_name,
                       const std::filesystem::path& base_dir) {
  if (yaml_text.size() > kMaxConfigBytes) {
    return std::unexpected(std::vector{whole_file_error(
        file_name, 0, 0,
        fmt::format("holds more than {} bytes, more than any configuration needs: is it the right "
                    "file?",
                    kMaxConfigBytes))});
  }
  // At most two documents are asked for: one to read, and whether another follows. yaml-cpp's
  // LoadAll asks until the parser says there are no more, which some input never reaches (a lone
  // `,` gives an empty document at the same place forever).
  YAML::Node document;
  try {
    std::istringstream stream{std::string(yaml_text)};
    YAML::Parser parser(stream);
    DocumentStarts seen;
    const bool first = parser.HandleNextDocument(seen);
    const bool second = first && parser.HandleNextDocument(seen);
    if (second && seen.starts.size() == 2 && seen.starts[0].pos == seen.starts[1].pos) {
      const YAML::Mark& at = seen.starts[1];
      return std::unexpected(std::vector{whole_file_error(
          file_name, at.line + 1, at.column + 1,
          "YAML syntax error: the text cannot be read from here on (a stray `,`, `]` or `}`?)")});
    }
    if (second) {
      return std::unexpected(std::vector{whole_file_error(
          file_name, 0, 0, "holds more than one YAML document (`---`); write one configuration")});
    }
    if (first) document = YAML::Load(std::string(yaml_text));
  } catch (const YAML::ParserException& e) {
    // e.mark is 0-based; e.msg is the message without yaml-cpp's own "line, column" prefix.
    return std::unexpected(std::vector{whole_file_error(
        file_name, e.mark.line + 1, e.mark.column + 1, "YAML syntax error: " + e.msg)});
  }
  if (!document.IsDefined() || document.IsNull()) {
    return std::unexpected(std::vector{whole_file_error(
        file_name, 0, 0, "the configuration is empty; it needs at least units, database, sites")});
  }
  const std::vector<YAML::Node> documents{document};
  Context cx(file_name, base_dir);
  Config config;
  config.file = file_name;
  const At top{documents.front(), "", documents.front().Mark()};
  if (!top.node.IsMap()) {
    cx.error(top, "the configuration must be a map of `key: value` lines (units, database, ...)");
  } else {
    read_map(top, top_keys(), cx, config);
  }
  if (cx.error_count() > 0) return std::unexpected(cx.take_errors());
  return config;
}

}  // namespace

ConfigResult parse_config(std::string_view yaml_text, std::string file_name,
                          const std::filesystem::path& base_dir) {
  // No exception leaves the module: yaml-cpp throws on more than syntax (e.g. bad_alloc, or a
  // conversion a reader forgot to guard), and std::filesystem may throw too.
  try {
    std::error_code ec;
    std::filesystem::path base = std::filesystem::absolute(base_dir, ec);
    if (ec) base = base_dir;
    return read_text(yaml_text, file_name, base.lexically_normal());
  } catch (const std::exception& e) {
    return std::unexpected(std::vector{
        whole_file_error(file_name, 0, 0, std::string("could not be read: ") + e.what())});
  }
}

ConfigResult load_config(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  if (!in) {
    return std::unexpected(std::vector{whole_file_error(
        file.string(), 0, 0, std::string("cannot open: ") + std::strerror(errno))});
  }
  // At most one byte more than a configuration may hold, whatever the file is (/dev/zero, a
  // pipe, a log file given by mistake): read_text refuses the rest.
  std::string text(kMaxConfigBytes + 1, '\0');
  in.read(text.data(), static_cast<std::streamsize>(text.size()));
  if (in.bad()) {
    return std::unexpected(std::vector{whole_file_error(
        file.string(), 0, 0, std::string("cannot read: ") + std::strerror(errno))});
  }
  text.resize(static_cast<std::size_t>(in.gcount()));
  std::error_code ec;
  std::filesystem::path absolute = std::filesystem::absolute(file, ec);
  if (ec) absolute = file;
  auto config = parse_config(text, file.string(), absolute.parent_path());
  if (config) config->file = absolute.lexically_normal();
  return config;
}

}  // namespace stagewell
