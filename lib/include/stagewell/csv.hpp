// CSV fields of one line (RFC 4180, restricted to a single line): fields are separated by ',';
// a field that starts with '"' is quoted, may contain ',' and writes a '"' as '""', and must be
// followed by ',' or the end of the line. Spaces and tabs around a field (and around its quotes)
// are not part of it; inside quotes they are. A '"' inside an unquoted field is an error, and so is
// a quoted field that is not closed on its line (readings never span lines).
#pragma once

#include <cstddef>
#include <expected>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace stagewell {

struct CsvField {
  std::string_view raw;  // the field's bytes; for a quoted field, those between the quotes
  bool quoted = false;
  bool has_escapes = false;  // raw contains "" pairs that stand for one '"'
};

struct CsvSyntaxError {
  std::size_t field_index = 0;  // 0-based field where the problem is
  std::string message;          // e.g. "field 2 has text after its closing quote"
};

// Splits `line` (no terminator) into `fields`, reusing the vector's storage. The fields point into
// `line`. An empty line is one empty field.
std::expected<void, CsvSyntaxError> split_csv_line(std::string_view line,
                                                   std::vector<CsvField>& fields);

// The field's text: unquoted fields trimmed of spaces and tabs, "" turned into " in quoted ones.
// Uses `scratch`
// only when there are escapes; the result is valid while `line` and `scratch` are.
std::string_view field_text(const CsvField& field, std::string& scratch);

// nullopt when `line` is text: valid UTF-8 with no control characters except tab. Otherwise a
// short description such as "NUL byte at byte 12" or "invalid UTF-8 at byte 3" (1-based).
std::optional<std::string> text_problem(std::string_view line);

}  // namespace stagewell
