// `stagewell export`: one site's stored readings over a period, as OGC WaterML 2.0 (a
// wml2:Collection holding two om:OM_Observations, discharge and stage, each a
// wml2:MeasurementTimeseries) or as CSV with the units in the header. Streams: the readings are
// read in chunks of kChunk, so a decade of minute readings exports in bounded memory.
//
// WaterML 2.0 (OGC 10-126r4) is written as this file's author remembers its structure: the
// collection's metadata, then one observationMember per series, each with its phenomenon and
// result times, procedure, observed property, feature of interest (a MonitoringPoint with the
// site's location where configured) and result; units as UCUM codes in wml2:uom; a reading with
// flags is marked quality "suspect" with its flags in a comment, one without discharge (out of
// range) gets a nil value with nilReason "missing".
#include <fmt/format.h>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <limits>
#include <memory>

#include "commands.hpp"
#include "progress.hpp"
#include "stagewell/store.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

constexpr std::size_t kChunk = 10000;  // readings read at once

struct ExportOptions {
  std::string config_path;
  std::string site_id;
  std::string from;
  std::string to;
  std::string format = "waterml2";
  std::string out;
  bool quiet = false;
};

std::string xml_escape(std::string_view text) {
  std::string out;
  for (const char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&apos;"; break;
      default: out += c;
    }
  }
  return out;
}

// A CSV field: quoted when it holds a comma, a quote or a line break (RFC 4180).
std::string csv_field(std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(text);
  std::string out = "\"";
  for (const char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

// Every reading of the site in [from, to], in time order, chunk by chunk.
template <typename Each>
Result<void> each_reading(Store& store, SiteKey key, std::int64_t from_ms, std::int64_t to_ms,
                          Each&& each) {
  std::vector<StoredReading> chunk;
  std::int64_t cursor = from_ms;
  while (cursor <= to_ms) {
    if (auto read = store.readings().range(key, cursor, to_ms, kChunk, chunk); !read) return read;
    for (const StoredReading& reading : chunk) each(reading);
    if (chunk.size() < kChunk || chunk.back().time_ms == std::numeric_limits<std::int64_t>::max()) {
      break;
    }
    cursor = chunk.back().time_ms + 1;
  }
  return {};
}

struct Series {
  std::string id;        // "discharge", "stage"
  std::string property;  // the observed property, in words
  std::string unit;      // UCUM
};

class WaterMlWriter {
 public:
  WaterMlWriter(std::ostream& out, const SiteConfig& site, std::int64_t from_ms,
                std::int64_t to_ms)
      : out_(out), site_(site), from_ms_(from_ms), to_ms_(to_ms) {}

  void begin() {
    out_ << "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
         << "<wml2:Collection xmlns:wml2=\"http://www.opengis.net/waterml/2.0\"\n"
         << "    xmlns:gml=\"http://www.opengis.net/gml/3.2\"\n"
         << "    xmlns:om=\"http://www.opengis.net/om/2.0\"\n"
         << "    xmlns:sa=\"http://www.opengis.net/sampling/2.0\"\n"
         << "    xmlns:sams=\"http://www.opengis.net/samplingSpatial/2.0\"\n"
         << "    xmlns:xlink=\"http://www.w3.org/1999/xlink\"\n"
         << "    xmlns:xsi=\"http://www.w3.org/2001/XMLSchema-instance\"\n"
         << "    gml:id=\"stagewell-export\">\n"
         << "  <wml2:metadata><wml2:DocumentMetadata gml:id=\"document\">\n"
         << "    <wml2:generationDate>" << format_timestamp_utc(system_now_ms())
         << "</wml2:generationDate>\n"
         << "    <wml2:generationSystem>stagewell " << STAGEWELL_VERSION
         << "</wml2:generationSystem>\n"
         << "  </wml2:DocumentMetadata></wml2:metadata>\n"
         << "  <!-- " << xml_escape(kCaution) << " -->\n";
  }

  void begin_series(const Series& series) {
    const std::string id = xml_escape(site_.id) + "-" + series.id;
    out_ << "  <wml2:observationMember>\n"
         << "    <om:OM_Observation gml:id=\"" << id << "\">\n"
         << "      <om:phenomenonTime><gml:TimePeriod gml:id=\"" << id << "-period\">"
         << "<gml:beginPosition>" << format_timestamp_utc(from_ms_) << "</gml:beginPosition>"
         << "<gml:endPosition>" << format_timestamp_utc(to_ms_) << "</gml:endPosition>"
         << "</gml:TimePeriod></om:phenomenonTime>\n"
         << "      <om:resultTime><gml:TimeInstant gml:id=\"" << id << "-result\">"
         << "<gml:timePosition>" << format_timestamp_utc(system_now_ms())
         << "</gml:timePosition></gml:TimeInstant></om:resultTime>\n"
         << "      <om:procedure xlink:title=\""
         << (series.id == "stage" ? "stage sensor, as recorded"
                                  : "Manning's equation for the configured section (an estimate)")
         << "\"/>\n"
         << "      <om:observedProperty xlink:title=\"" << series.property << "\"/>\n"
         << "      <om:featureOfInterest>\n"
         << "        <wml2:MonitoringPoint gml:id=\"" << id << "-site\">\n"
         << "          <gml:identifier codeSpace=\"stagewell\">" << xml_escape(site_.id)
         << "</gml:identifier>\n"
         << "          <gml:name>" << xml_escape(site_.name) << "</gml:name>\n"
         << "          <sa:sampledFeature xlink:title=\"" << xml_escape(site_.name) << "\"/>\n";
    if (site_.location) {
      // EPSG:4326 orders latitude first.
      out_ << "          <sams:shape><gml:Point gml:id=\"" << id << "-point\">"
           << "<gml:pos srsName=\"http://www.opengis.net/def/crs/EPSG/0/4326\">"
           << fmt::format("{} {}", site_.location->latitude, site_.location->longitude)
           << "</gml:pos></gml:Point></sams:shape>\n";
    }
    if (site_.datum) {
      out_ << "          <!-- datum: " << xml_escape(*site_.datum) << " -->\n";
    }
    out_ << "        </wml2:MonitoringPoint>\n"
         << "      </om:featureOfInterest>\n"
         << "      <om:result>\n"
         << "        <wml2:MeasurementTimeseries gml:id=\"" << id << "-series\">\n"
         << "          <wml2:defaultPointMetadata><wml2:DefaultTVPMeasurementMetadata>"
         << "<wml2:uom code=\"" << xml_escape(series.unit) << "\"/>"
         << "<wml2:interpolationType xlink:href=\"http://www.opengis.net/def/waterml/2.0/"
            "interpolationType/Continuous\" xlink:title=\"Continuous\"/>"
         << "</wml2:DefaultTVPMeasurementMetadata></wml2:defaultPointMetadata>\n";
  }

  void point(std::int64_t time_ms, std::optional<double> value, Flags flags) {
    out_ << "          <wml2:point><wml2:MeasurementTVP><wml2:time>"
         << format_timestamp_utc(time_ms) << "</wml2:time>";
    if (value) {
      out_ << "<wml2:value>" << fmt::format("{}", *value) << "</wml2:value>";
    } else {
      out_ << "<wml2:value xsi:nil=\"true\"/>";
    }
    if (!value || !flags.empty()) {
      out_ << "<wml2:metadata><wml2:TVPMeasurementMetadata>";
      if (!value) {
        out_ << "<wml2:nilReason xlink:href=\"http://www.opengis.net/def/nil/OGC/0/missing\"/>";
      }
      if (!flags.empty()) {
        out_ << "<wml2:qualifier xlink:href=\"http://www.opengis.net/def/waterml/2.0/quality/"
                "suspect\" xlink:title=\"suspect\"/>"
             << "<wml2:comment>flags: " << flags.joined(',') << "</wml2:comment>";
      }
      out_ << "</wml2:TVPMeasurementMetadata></wml2:metadata>";
    }
    out_ << "</wml2:MeasurementTVP></wml2:point>\n";
  }

  void end_series() {
    out_ << "        </wml2:MeasurementTimeseries>\n"
         << "      </om:result>\n"
         << "    </om:OM_Observation>\n"
         << "  </wml2:observationMember>\n";
  }

  void end() { out_ << "</wml2:Collection>\n"; }

  static constexpr std::string_view kCaution =
      "Discharge is an estimate from Manning's equation for the configured cross-section: verify "
      "it with field measurements; not for life-safety decisions without a licensed engineer's "
      "review.";

 private:
  std::ostream& out_;
  const SiteConfig& site_;
  std::int64_t from_ms_;
  std::int64_t to_ms_;
};

int run_export(const ExportOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const SiteConfig* site = find_site_or_report(*config, options.site_id);
  if (!site) return kInvalidInput;
  const auto from =
      parse_time_option(options.from, "--from", std::numeric_limits<std::int64_t>::min());
  const auto to = parse_time_option(options.to, "--to", std::numeric_limits<std::int64_t>::max());
  if (!from || !to) return kUsage;
  if (*from > *to) {
    std::cerr << "--from is after --to\n";
    return kUsage;
  }
  auto store = Store::open_read_only(config->database);
  if (!store) {
    std::cerr << "cannot open the database " << config->database.string() << ": "
              << store.error().message << '\n';
    return kInvalidInput;
  }
  auto key = store->sites().find(site->id);
  if (!key) {
    std::cerr << key.error().message << '\n';
    return kInvalidInput;
  }
  const std::int64_t total =
      *key ? store->readings().count(**key, *from, *to).value_or(0) : std::int64_t{0};
  // The file is written under a temporary name and renamed when complete.
  std::ofstream file;
  const std::string part = options.out + ".part";
  if (!options.out.empty()) {
    file.open(part, std::ios::out | std::ios::trunc);
    if (!file) {
      std::cerr << "cannot write " << part << '\n';
      return kInvalidInput;
    }
  }
  std::ostream& out = options.out.empty() ? std::cout : file;
  ProgressDisplay progress(options.quiet || options.out.empty());
  std::int64_t done = 0;
  const std::int64_t passes = options.format == "waterml2" ? 2 : 1;
  const auto step = [&] {
    ++done;
    if (done % 4096 == 0) progress.update("export", done, total * passes, "readings", "");
  };
  const auto system = config->units;
  Result<void> read = {};
  // Readings shown span the range asked for, or the site's record when no range was given.
  std::int64_t first_ms = *from;
  std::int64_t last_ms = *to;
  if (*key && (options.from.empty() || options.to.empty())) {
    if (auto span = store->readings().span(**key); span && *span) {
      if (options.from.empty()) first_ms = (*span)->first;
      if (options.to.empty()) last_ms = (*span)->second;
    }
  }
  if (first_ms == std::numeric_limits<std::int64_t>::min()) first_ms = 0;  // an empty record
  if (last_ms == std::numeric_limits<std::int64_t>::max() || last_ms < first_ms) {
    last_ms = first_ms;
  }
  if (options.format == "csv") {
    out << fmt::format("# {}\n", WaterMlWriter::kCaution);
    out << fmt::format("site,time,time_ms,stage ({}),depth ({}),discharge ({}),flags\n",
                       units::ucum(site->stage.units), units::ucum_length(system),
                       units::ucum_discharge(system));
    if (*key) {
      read = each_reading(*store, **key, *from, *to, [&](const StoredReading& r) {
        out << csv_field(site->id) << ',' << format_timestamp_utc(r.time_ms) << ',' << r.time_ms
            << ',' << fmt::format("{}", r.stage) << ',' << fmt::format("{}", r.depth) << ','
            << (r.discharge ? fmt::format("{}", *r.discharge) : std::string()) << ','
            << csv_field(r.flags.joined(',')) << '\n';
        step();
      });
    }
  } else {
    WaterMlWriter xml(out, *site, first_ms, last_ms);
    xml.begin();
    const Series series[] = {
        {"discharge", "discharge", std::string(units::ucum_discharge(system))},
        {"stage", "stage (water level above the gauge's zero)",
         std::string(units::ucum(site->stage.units))}};
    for (const Series& s : series) {
      xml.begin_series(s);
      if (*key && read) {
        read = each_reading(*store, **key, *from, *to, [&](const StoredReading& r) {
          if (s.id == "discharge") {
            xml.point(r.time_ms, r.discharge, r.flags);
          } else {
            xml.point(r.time_ms, r.stage, r.flags);
          }
          step();
        });
      }
      xml.end_series();
    }
    xml.end();
  }
  progress.update("export", done, total * passes, "readings", "", true);
  progress.end_line();
  if (!read) {
    std::cerr << "export failed: " << read.error().message << '\n';
    if (!options.out.empty()) std::filesystem::remove(part);
    return kInvalidInput;
  }
  out.flush();
  if (!options.out.empty()) {
    file.close();
    if (!file) {
      std::cerr << "cannot write " << part << '\n';
      return kInvalidInput;
    }
    std::error_code ec;
    std::filesystem::rename(part, options.out, ec);
    if (ec) {
      std::cerr << "cannot rename " << part << " to " << options.out << ": " << ec.message() << '\n';
      return kInvalidInput;
    }
    std::cerr << fmt::format("{} readings of {} written to {} ({})\n", total, site->id,
                             options.out, options.format);
  }
  return kOk;
}

}  // namespace

void add_export_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "export", "Write one site's stored readings as WaterML 2.0 or as CSV, units included");
  auto options = std::make_shared<ExportOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("-s,--site", options->site_id, "The site")->required();
  command->add_option("--from", options->from,
                      "From this RFC 3339 time, included (default: the start of the record)");
  command->add_option("--to", options->to,
                      "To this RFC 3339 time, included (default: the end of the record)");
  command->add_option("--format", options->format, "waterml2 (default) or csv")
      ->check(CLI::IsMember({"waterml2", "csv"}));
  command->add_option("-o,--out", options->out,
                      "Write to this file (renamed into place when complete); default: stdout");
  command->add_flag("-q,--quiet", options->quiet, "No progress display");
  command->footer(
      "WaterML 2.0: discharge and stage as two time series, units as UCUM codes, flagged readings "
      "marked suspect with their flags, readings without discharge as nil values. CSV: one row "
      "per reading, the units in the header. Discharge is an estimate: verify it with field "
      "measurements.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_export(*options); }; });
}

}  // namespace stagewell::cli
