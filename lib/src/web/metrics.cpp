// /metrics: the OpenMetrics text format 1.0.0 (openmetrics.io, "OpenMetrics 1.0" specification),
// or the Prometheus text format 0.0.4 for a client whose Accept asks for text/plain only.
// The differences that matter here: OpenMetrics names a counter family without `_total` and its
// sample with it, has UNIT lines, and ends with `# EOF`; 0.0.4 names the family as the sample.
#include <fmt/format.h>

#include <algorithm>
#include <map>
#include <utility>
#include <vector>

#include <filesystem>
#include <string>

#include "stagewell/records.hpp"
#include "web/state.hpp"

namespace stagewell::web_detail {
namespace {

// The length of the UTF-8 sequence (RFC 3629, section 4) starting at text[i], 0 when invalid.
std::size_t utf8_length(std::string_view text, std::size_t i) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
  const unsigned char lead = byte(i);
  std::size_t length = 0;
  unsigned low = 0x80, high = 0xBF;  // bounds of the second byte
  if (lead < 0x80) return 1;
  if (lead >= 0xC2 && lead <= 0xDF) length = 2;
  if (lead >= 0xE0 && lead <= 0xEF) length = 3;
  if (lead >= 0xF0 && lead <= 0xF4) length = 4;
  if (lead == 0xE0) low = 0xA0;   // no overlong forms
  if (lead == 0xED) high = 0x9F;  // no surrogates
  if (lead == 0xF0) low = 0x90;
  if (lead == 0xF4) high = 0x8F;  // nothing above U+10FFFF
  if (length == 0 || i + length > text.size()) return 0;
  if (byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (std::size_t k = 2; k < length; ++k) {
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  }
  return length;
}

// Label values escape backslash, double quote and line feed (both formats), and must be UTF-8:
// a byte that is not is replaced by U+FFFD (text from a view another module fills).
std::string escape(std::string_view value) {
  std::string out;
  for (std::size_t i = 0; i < value.size();) {
    const std::size_t length = utf8_length(value, i);
    if (length == 0) {
      out += "\xEF\xBF\xBD";
      ++i;
      continue;
    }
    const char c = value[i];
    if (c == '\\') {
      out += "\\\\";
    } else if (c == '"') {
      out += "\\\"";
    } else if (c == '\n') {
      out += "\\n";
    } else {
      out.append(value.substr(i, length));
    }
    i += length;
  }
  return out;
}

class Writer {
 public:
  explicit Writer(bool openmetrics) : openmetrics_(openmetrics) {}

  // A family: `name` without `_total` for a counter, without `_info` for an info family (a
  // gauge named name_info in the older text format, which has no info type); `unit` empty or the
  // name's last word.
  void family(std::string_view name, std::string_view type, std::string_view help,
              std::string_view unit = {}) {
    counter_ = type == "counter";
    info_ = type == "info";
    name_ = std::string(name);
    std::string declared = name_;
    if (!openmetrics_ && counter_) declared += "_total";
    if (!openmetrics_ && info_) declared += "_info";
    text_ += fmt::format("# TYPE {} {}\n", declared, info_ && !openmetrics_ ? "gauge" : type);
    if (openmetrics_ && !unit.empty()) text_ += fmt::format("# UNIT {} {}\n", declared, unit);
    text_ += fmt::format("# HELP {} {}\n", declared, help);
  }

  // One sample of the current family; `labels` already written as name="value" pairs.
  void sample(std::string_view labels, double value) {
    const std::string name = counter_ ? name_ + "_total" : info_ ? name_ + "_info" : name_;
    const std::string shown = value == static_cast<double>(static_cast<std::int64_t>(value))
                                  ? fmt::format("{}", static_cast<std::int64_t>(value))
                                  : fmt::format("{}", value);
    text_ += labels.empty() ? fmt::format("{} {}\n", name, shown)
                            : fmt::format("{}{{{}}} {}\n", name, labels, shown);
  }

  std::string finish() {
    if (openmetrics_) text_ += "# EOF\n";
    return std::move(text_);
  }

 private:
  bool openmetrics_;
  bool counter_ = false;
  bool info_ = false;
  std::string name_;
  std::string text_;
};

std::string label(std::string_view name, std::string_view value) {
  return fmt::format("{}=\"{}\"", name, escape(value));
}

double file_bytes(const std::filesystem::path& path) {
  std::error_code ec;
  const auto size = std::filesystem::file_size(path, ec);
  return ec ? 0.0 : static_cast<double>(size);
}

// One lag per source the service reads: a drop folder's files are folded into their folder
// ("folder:/srv/in/a.csv" -> "folder:/srv/in"), so that a finished file leaves no series of its
// own whose age grows forever; a followed file ("tail:...") and a tcp listener ("tcp ...") are
// their own. The newest input of each.
std::map<std::string, std::int64_t> source_lags(const std::vector<SourceProgress>& rows) {
  std::map<std::string, std::int64_t> out;
  for (const SourceProgress& row : rows) {
    std::string source = row.source;
    if (source.starts_with("folder:")) {
      const auto slash = source.rfind('/');
      if (slash != std::string::npos && slash > std::string_view("folder:").size()) {
        source.resize(slash);
      }
    }
    auto [it, added] = out.emplace(std::move(source), row.progress.updated_ms);
    if (!added) it->second = std::max(it->second, row.progress.updated_ms);
  }
  return out;
}

constexpr std::string_view kExtraRejectKinds[] = {"bad_header", "conflict"};

// Bounds on the rows one answer reads: the most recent sources, and (site, kind) pairs.
constexpr std::size_t kMaxSources = 100;
constexpr std::size_t kMaxAlarmStates = 1000;

}  // namespace

Result<HttpAnswer> metrics_answer(StatusApi::State& state, std::string_view accept,
                                  std::int64_t now_ms) {
  // OpenMetrics unless the client asks for the older text format and not for OpenMetrics.
  const bool openmetrics = accept.find("application/openmetrics-text") != std::string_view::npos ||
                           accept.find("text/plain") == std::string_view::npos;
  const LiveFigures live = state.live ? state.live() : LiveFigures{};
  const IngestCounts& counts = live.counts;
  Writer out(openmetrics);

  out.family("stagewell_readings_stored", "counter", "Readings stored since the service started.");
  out.sample("", static_cast<double>(counts.stored));
  out.family("stagewell_readings_repeated", "counter",
             "Repeats of stored readings, ignored, since the service started.");
  out.sample("", static_cast<double>(counts.duplicates));

  // Every known reason, zero included, so that a rate is defined before the first reject.
  std::map<std::string, std::int64_t, std::less<>> rejected;
  for (int kind = 0; kind <= static_cast<int>(RejectKind::non_finite_stage); ++kind) {
    rejected[std::string(name(static_cast<RejectKind>(kind)))] = 0;
  }
  for (const auto kind : kExtraRejectKinds) rejected[std::string(kind)] = 0;
  for (const auto& [reason, count] : counts.rejected_by_reason) rejected[reason] = count;
  out.family("stagewell_lines_rejected", "counter",
             "Input lines kept aside as rejects since the service started, by reason.");
  for (const auto& [reason, count] : rejected) {
    out.sample(label("reason", reason), static_cast<double>(count));
  }

  std::map<std::string, std::int64_t, std::less<>> flagged;
  for (const Flag flag : all_flags()) flagged[std::string(name(flag))] = 0;
  for (const auto& [flag, count] : counts.flagged_by_flag) flagged[flag] = count;
  out.family("stagewell_readings_flagged", "counter",
             "Readings stored with a flag since the service started, by flag.");
  for (const auto& [flag, count] : flagged) {
    out.sample(label("flag", flag), static_cast<double>(count));
  }

  out.family("stagewell_commits", "counter", "Batches committed since the service started.");
  out.sample("", static_cast<double>(counts.commits));

  // Lag of each source: seconds since its reading position was last committed (ingest_progress;
  // a tcp listener writes its row, without an offset, when lines arrive); a source that delivers
  // nothing new grows old. The most recent sources (kMaxSources).
  out.family("stagewell_source_progress_age_seconds", "gauge",
             "Seconds since each source (drop folder, followed file or tcp listener) last had "
             "input committed.",
             "seconds");
  auto progress = state.store.progress(kMaxSources);
  if (!progress) return std::unexpected(progress.error());
  for (const auto& [source, updated_ms] : source_lags(*progress)) {
    out.sample(label("source", source), static_cast<double>(now_ms - updated_ms) / 1000.0);
  }

  out.family("stagewell_database_size_bytes", "gauge",
             "Size of the database file and of its write-ahead log.", "bytes");
  out.sample(label("file", "database"), file_bytes(state.config.database));
  out.sample(label("file", "wal"), file_bytes(state.config.database.string() + "-wal"));

  // Each site's latest reading, read once for the three families below.
  std::vector<std::pair<const SiteConfig*, StoredReading>> latest;
  for (const auto& site : state.config.sites) {
    auto key = site_key(state, site.id);
    if (!key) return std::unexpected(key.error());
    if (!*key) continue;
    auto reading = state.store.latest_reading(**key);
    if (!reading) return std::unexpected(reading.error());
    if (*reading) latest.emplace_back(&site, **reading);
  }
  out.family("stagewell_site_reading_age_seconds", "gauge",
             "Seconds from each site's latest reading to now.", "seconds");
  for (const auto& [site, reading] : latest) {
    out.sample(label("site", site->id), static_cast<double>(now_ms - reading.time_ms) / 1000.0);
  }
  // What a dashboard plots: each site's latest reading, with its unit as a UCUM code.
  out.family("stagewell_site_latest_discharge", "gauge",
             "Discharge of each site's latest reading (absent when it has none: out of range).");
  for (const auto& [site, reading] : latest) {
    if (!reading.discharge) continue;
    out.sample(label("site", site->id) + "," +
                   label("unit", units::ucum_discharge(state.config.units)),
               *reading.discharge);
  }
  out.family("stagewell_site_latest_stage", "gauge",
             "Stage of each site's latest reading, as the sensor wrote it.");
  for (const auto& [site, reading] : latest) {
    out.sample(label("site", site->id) + "," + label("unit", units::ucum(site->stage.units)),
               reading.stage);
  }

  auto alarms = state.store.has_alarms();
  if (!alarms) return std::unexpected(alarms.error());
  out.family("stagewell_alarms_available", "gauge",
             "1 when the database has the alarms view, 0 before it exists.");
  out.sample("", *alarms ? 1.0 : 0.0);
  out.family("stagewell_alarm_active", "gauge",
             "1 while an alarm of this site and kind is raised and not cleared, else 0.");
  if (*alarms) {
    auto states = state.store.alarm_states(kMaxAlarmStates);
    if (!states) return std::unexpected(states.error());
    for (const alarms::AlarmState& alarm : *states) {
      out.sample(label("site", alarm.site) + "," + label("kind", alarms::name(alarm.kind)),
                 alarm.open ? 1.0 : 0.0);
    }
  }

  out.family("stagewell_store_failing", "gauge",
             "1 while the database cannot be written (a full disk, a damaged file), else 0.");
  out.sample("", live.store_failing_since_ms != 0 ? 1.0 : 0.0);
  out.family("stagewell_store_failing_seconds", "gauge",
             "How long the database has not been writable, 0 while it is.", "seconds");
  out.sample("", live.store_failing_since_ms != 0
                     ? static_cast<double>(now_ms - live.store_failing_since_ms) / 1000.0
                     : 0.0);

  if (live.warehouse) {
    const WarehouseFigures& warehouse = *live.warehouse;
    out.family("stagewell_warehouse_connected", "gauge",
               "1 while the service reaches the warehouse it ships to, else 0.");
    out.sample("", warehouse.connected ? 1.0 : 0.0);
    out.family("stagewell_warehouse_lag_readings", "gauge",
               "Readings stored here and not yet shipped to the warehouse (at most).");
    out.sample("", static_cast<double>(warehouse.lag_readings));
    out.family("stagewell_warehouse_shipped_readings", "counter",
               "Readings shipped to the warehouse since the service started.");
    out.sample("", static_cast<double>(warehouse.shipped_readings));
    if (warehouse.last_shipped_ms) {
      out.family("stagewell_warehouse_last_shipped_timestamp_seconds", "gauge",
                 "When the warehouse last committed a shipment from here (Unix time).",
                 "seconds");
      out.sample("", static_cast<double>(*warehouse.last_shipped_ms) / 1000.0);
    }
  }

  out.family("stagewell_start_time_seconds", "gauge", "When the service started (Unix time).",
             "seconds");
  out.sample("", static_cast<double>(live.started_ms) / 1000.0);
  out.family("stagewell_build", "info", "The version of the service answering.");
  out.sample(label("version", STAGEWELL_VERSION), 1.0);

  HttpAnswer answer;
  answer.content_type = openmetrics ? "application/openmetrics-text; version=1.0.0; charset=utf-8"
                                    : "text/plain; version=0.0.4; charset=utf-8";
  answer.headers.emplace_back("Cache-Control", "no-store");
  answer.body = out.finish();
  return answer;
}

}  // namespace stagewell::web_detail
