// Lines -> records or rejects. Numbers go through std::from_chars, which ignores the locale, so a
// service started under a locale with ',' as decimal separator reads the same numbers.
#include "stagewell/records.hpp"

#include <charconv>
#include <cmath>
#include <system_error>
#include <utility>

#include "stagewell/ascii_case.hpp"

namespace stagewell {
namespace {

constexpr std::string_view kByteOrderMark = "\xEF\xBB\xBF";
constexpr std::size_t kQuotedValueBytes = 60;  // longer values are cut in reasons

std::string_view trim(std::string_view text) {
  while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
  while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
  return text;
}

// 'value' for a reason, cut at a character boundary (the line has passed text_problem) if long.
std::string quoted(std::string_view value) {
  if (value.size() <= kQuotedValueBytes) return "'" + std::string(value) + "'";
  std::size_t cut = kQuotedValueBytes;
  while (cut > 0 && (static_cast<unsigned char>(value[cut]) & 0xC0) == 0x80) --cut;
  return "'" + std::string(value.substr(0, cut)) + "...'";
}

LineReject reject(RejectKind kind, std::int64_t line_number, std::string field,
                  std::string reason) {
  return LineReject{kind, line_number, std::move(field), std::move(reason)};
}

}  // namespace

std::string_view name(RejectKind kind) {
  switch (kind) {
    case RejectKind::too_long:
      return "too_long";
    case RejectKind::not_text:
      return "not_text";
    case RejectKind::malformed:
      return "malformed";
    case RejectKind::field_count:
      return "field_count";
    case RejectKind::unknown_site:
      return "unknown_site";
    case RejectKind::bad_time:
      return "bad_time";
    case RejectKind::bad_stage:
      return "bad_stage";
    case RejectKind::non_finite_stage:
      return "non_finite_stage";
  }
  return "unknown";
}

Result<ColumnMap> map_header(std::string_view line, const ColumnNames& names, bool need_site) {
  if (auto problem = text_problem(line)) {
    return fail(ErrorKind::parse, "the header line is not text: " + *problem);
  }
  std::vector<CsvField> fields;
  if (auto split = split_csv_line(line, fields); !split) {
    return fail(ErrorKind::parse, "the header line is not valid CSV: " + split.error().message);
  }

  struct Wanted {
    const std::string& name;
    std::optional<std::size_t> index;
    bool required;
  };
  Wanted wanted[] = {{names.site, std::nullopt, need_site},
                     {names.time, std::nullopt, true},
                     {names.stage, std::nullopt, true}};
  std::string found;  // the header's names, for the message about a missing column
  std::string scratch;
  for (std::size_t i = 0; i < fields.size(); ++i) {
    const std::string_view column = trim(field_text(fields[i], scratch));
    found += (i == 0 ? "" : ", ") + quoted(column);
    for (auto& want : wanted) {
      if (!equal_ignoring_case(column, want.name)) continue;
      if (want.index && want.required) {
        return fail(ErrorKind::parse, "the header names column '" + want.name + "' twice (fields " +
                                          std::to_string(*want.index + 1) + " and " +
                                          std::to_string(i + 1) + ")");
      }
      want.index = i;
    }
  }
  for (const auto& want : wanted) {
    if (want.required && !want.index) {
      return fail(ErrorKind::parse,
                  "the header has no '" + want.name + "' column (its columns are " + found + ")");
    }
  }

  ColumnMap map;
  map.field_count = fields.size();
  if (need_site) map.site = wanted[0].index;
  map.time = *wanted[1].index;
  map.stage = *wanted[2].index;
  return map;
}

Result<RecordParser> RecordParser::create(const SourceSpec& source, KnownSite known_site) {
  std::optional<TimeZone> zone;
  if (source.time_zone) {
    auto parsed = TimeZone::parse(*source.time_zone);
    if (!parsed) return std::unexpected(parsed.error());
    zone = std::move(*parsed);
  }
  return RecordParser(source, std::move(zone), std::move(known_site));
}

RecordParser::RecordParser(const SourceSpec& source, std::optional<TimeZone> zone,
                           KnownSite known_site)
    : names_(source.columns),
      fixed_site_(source.site),
      zone_(std::move(zone)),
      known_site_(std::move(known_site)) {}

ParsedLine RecordParser::parse_line(const Line& line) {
  if (fatal_) return *fatal_;
  if (line.too_long) {
    return reject(RejectKind::too_long, line.number, "",
                  "the line is longer than " + std::to_string(line.text.size()) + " bytes");
  }
  std::string_view text = line.text;
  if (line.number == 1 && text.starts_with(kByteOrderMark)) text.remove_prefix(3);
  const std::string_view content = trim(text);
  if (content.empty() || content.front() == '#') return Skipped{};
  if (!columns_) return parse_header(text, line.number);
  return parse_data(text, line.number);
}

ParsedLine RecordParser::parse_header(std::string_view text, std::int64_t line_number) {
  auto map = map_header(text, names_, !fixed_site_.has_value());
  if (!map) {
    fatal_ =
        Error{map.error().kind, "line " + std::to_string(line_number) + ": " + map.error().message};
    return *fatal_;
  }
  columns_ = *map;
  return *columns_;
}

ParsedLine RecordParser::parse_data(std::string_view text, std::int64_t line_number) {
  if (auto problem = text_problem(text)) {
    return reject(RejectKind::not_text, line_number, "", "not text: " + *problem);
  }
  const ColumnMap& columns = *columns_;
  const auto column_name = [&](std::size_t index) -> std::string {
    if (columns.site && index == *columns.site) return names_.site;
    if (index == columns.time) return names_.time;
    if (index == columns.stage) return names_.stage;
    return "";
  };
  if (auto split = split_csv_line(text, fields_); !split) {
    return reject(RejectKind::malformed, line_number, column_name(split.error().field_index),
                  "malformed CSV: " + split.error().message);
  }
  if (fields_.size() != columns.field_count) {
    return reject(RejectKind::field_count, line_number, "",
                  "expected " + std::to_string(columns.field_count) +
                      " fields as in the header, found " + std::to_string(fields_.size()));
  }

  Record record;
  record.line_number = line_number;
  if (fixed_site_) {
    record.site = *fixed_site_;
  } else {
    record.site = field_text(fields_[*columns.site], site_scratch_);
    if (record.site.empty()) {
      return reject(RejectKind::unknown_site, line_number, names_.site, "the site is empty");
    }
    if (!known_site_ || !known_site_(record.site)) {
      return reject(RejectKind::unknown_site, line_number, names_.site,
                    "site " + quoted(record.site) + " is not a configured site");
    }
  }

  const std::string_view time_text = field_text(fields_[columns.time], time_scratch_);
  const auto time_ms = parse_timestamp(time_text, zone_ ? &*zone_ : nullptr);
  if (!time_ms) {
    return reject(RejectKind::bad_time, line_number, names_.time,
                  "time " + quoted(time_text) + ": " + time_ms.error().message);
  }
  record.time_ms = *time_ms;

  const std::string_view stage_text = field_text(fields_[columns.stage], stage_scratch_);
  std::string_view number = stage_text;
  if (number.size() > 1 && number.front() == '+' && number[1] != '-') number.remove_prefix(1);
  if (number.empty()) {
    return reject(RejectKind::bad_stage, line_number, names_.stage, "the stage is empty");
  }
  const char* end = number.data() + number.size();
  const auto [stop, error] = std::from_chars(number.data(), end, record.stage);
  if (error == std::errc::result_out_of_range) {
    return reject(RejectKind::non_finite_stage, line_number, names_.stage,
                  "stage " + quoted(stage_text) + " is outside the range of a double");
  }
  if (error != std::errc{} || stop != end) {
    const bool comma = stage_text.find(',') != std::string_view::npos;
    return reject(RejectKind::bad_stage, line_number, names_.stage,
                  "stage " + quoted(stage_text) + " is not a number" +
                      (comma ? " (use '.' as the decimal point)" : ""));
  }
  if (!std::isfinite(record.stage)) {
    return reject(RejectKind::non_finite_stage, line_number, names_.stage,
                  "stage " + quoted(stage_text) + " is not a finite number");
  }
  return record;
}

}  // namespace stagewell
