// Readings from CSV text: a header line names the columns, every later line is one reading or one
// reject. Blank lines and lines starting with '#' are skipped everywhere. The first other line is
// the header; a UTF-8 byte order mark before it is ignored.
//
// Header: names are matched to ColumnNames without regard to ASCII case or surrounding spaces.
// Columns not named there are ignored. A missing time or stage column, or a missing site column in
// a source without a fixed site, is an error for the whole stream. In a source with a fixed site a
// site column is ignored (it often holds a label rather than the configured id).
//
// Data lines are checked in this order, and the first problem is the reject reason:
//   too_long          longer than the line limit (reported by LineSplitter)
//   not_text          NUL, a control character other than tab, or invalid UTF-8
//   malformed         bad quoting
//   field_count       not as many fields as the header
//   unknown_site      the site id is empty or not configured
//   bad_time          not a timestamp (see timestamp.hpp), or a local time the zone cannot place
//   bad_stage         not a decimal number ('.' as the decimal point; exponent allowed)
//   non_finite_stage  nan, inf, or too large for a double
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/csv.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/result.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell {

enum class RejectKind {
  too_long,
  not_text,
  malformed,
  field_count,
  unknown_site,
  bad_time,
  bad_stage,
  non_finite_stage,
};

std::string_view name(RejectKind kind);  // "too_long", ... (stored with each reject: never rename)

struct LineReject {
  RejectKind kind = RejectKind::malformed;
  std::int64_t line_number = 0;
  std::string field;   // the column the problem is in ("time"), empty for the whole line
  std::string reason;  // a sentence for a person, quoting the offending value
};

struct Record {
  std::string_view site;     // valid until the next parse_line call
  std::int64_t time_ms = 0;  // since 1970-01-01T00:00:00Z
  double stage = 0.0;        // stage units, as read (no offset applied)
  std::int64_t line_number = 0;
};

struct Skipped {};  // blank or comment line

// Field indexes (0-based) of the columns used.
struct ColumnMap {
  std::size_t field_count = 0;
  std::optional<std::size_t> site;  // absent for a source with a fixed site
  std::size_t time = 0;
  std::size_t stage = 0;
};

// Maps a header line. `need_site`: false when the source has a fixed site.
Result<ColumnMap> map_header(std::string_view line, const ColumnNames& names, bool need_site);

// What one line was. An Error means the stream cannot be read (no usable header); every line after
// it gives the same Error.
using ParsedLine = std::variant<Skipped, ColumnMap, Record, LineReject, Error>;

// True when `site` is a configured site id. An empty function knows no site.
using KnownSite = std::function<bool(std::string_view site)>;

// Turns the lines of one stream into records and rejects. Not thread-safe: one per stream.
class RecordParser {
 public:
  // Fails when the source's time_zone is not a known zone.
  static Result<RecordParser> create(const SourceSpec& source, KnownSite known_site);

  ParsedLine parse_line(const Line& line);

  const std::optional<ColumnMap>& columns() const { return columns_; }

 private:
  RecordParser(const SourceSpec& source, std::optional<TimeZone> zone, KnownSite known_site);
  ParsedLine parse_header(std::string_view text, std::int64_t line_number);
  ParsedLine parse_data(std::string_view text, std::int64_t line_number);

  ColumnNames names_;
  std::optional<std::string> fixed_site_;
  std::optional<TimeZone> zone_;
  KnownSite known_site_;
  std::optional<ColumnMap> columns_;
  std::optional<Error> fatal_;
  std::vector<CsvField> fields_;  // reused for every line
  std::string site_scratch_;      // a site id with "" escapes, unescaped
  std::string time_scratch_;
  std::string stage_scratch_;
};

}  // namespace stagewell
