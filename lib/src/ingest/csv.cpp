// One CSV line -> fields, without copying: fields are views into the line, and only a quoted field
// with "" escapes is ever rewritten (into the caller's scratch string).
#include "stagewell/csv.hpp"

#include <cstdint>

namespace stagewell {
namespace {

bool is_blank(char c) { return c == ' ' || c == '\t'; }

std::string field_name(std::size_t index) { return "field " + std::to_string(index + 1); }

std::unexpected<CsvSyntaxError> syntax_error(std::size_t index, std::string what) {
  return std::unexpected(CsvSyntaxError{index, field_name(index) + " " + what});
}

std::string hex_byte(unsigned char byte) {
  constexpr char kDigits[] = "0123456789ABCDEF";
  return std::string("0x") + kDigits[byte >> 4] + kDigits[byte & 0x0F];
}

// True when every byte is printable ASCII (0x20-0x7E): almost every line of a logger's file, so
// checked first, without an early exit so that the compiler can test many bytes at once. A tab or
// any other byte sends the line through the full check below.
bool printable_ascii(std::string_view line) {
  unsigned char outside = 0;
  for (const char c : line) {
    const auto byte = static_cast<unsigned char>(c);
    outside |= static_cast<unsigned char>(byte < 0x20 || byte > 0x7E);
  }
  return outside == 0;
}

}  // namespace

std::expected<void, CsvSyntaxError> split_csv_line(std::string_view line,
                                                   std::vector<CsvField>& fields) {
  fields.clear();
  const std::size_t n = line.size();
  std::size_t i = 0;
  while (true) {
    const std::size_t index = fields.size();
    std::size_t first = i;
    while (first < n && is_blank(line[first])) ++first;

    if (first < n && line[first] == '"') {
      bool has_escapes = false;
      std::size_t k = first + 1;
      while (true) {
        if (k >= n) return syntax_error(index, "opens a quote that is not closed on this line");
        if (line[k] == '"') {
          if (k + 1 < n && line[k + 1] == '"') {
            has_escapes = true;
            k += 2;
            continue;
          }
          break;
        }
        ++k;
      }
      fields.push_back(CsvField{line.substr(first + 1, k - first - 1), true, has_escapes});
      ++k;  // past the closing quote
      while (k < n && is_blank(line[k])) ++k;
      if (k >= n) return {};
      if (line[k] != ',') return syntax_error(index, "has text after its closing quote");
      i = k + 1;
      continue;
    }

    const std::size_t comma = line.find(',', i);
    const std::size_t end = comma == std::string_view::npos ? n : comma;
    const std::string_view raw = line.substr(i, end - i);
    if (raw.find('"') != std::string_view::npos) {
      return syntax_error(index, "has a quote inside it but does not start with one");
    }
    fields.push_back(CsvField{raw, false, false});
    if (comma == std::string_view::npos) return {};
    i = comma + 1;
  }
}

std::string_view field_text(const CsvField& field, std::string& scratch) {
  if (field.quoted) {
    if (!field.has_escapes) return field.raw;
    scratch.clear();
    for (std::size_t i = 0; i < field.raw.size(); ++i) {
      scratch.push_back(field.raw[i]);
      if (field.raw[i] == '"') ++i;  // the second quote of a "" pair
    }
    return scratch;
  }
  std::string_view text = field.raw;
  while (!text.empty() && is_blank(text.front())) text.remove_prefix(1);
  while (!text.empty() && is_blank(text.back())) text.remove_suffix(1);
  return text;
}

std::optional<std::string> text_problem(std::string_view line) {
  if (printable_ascii(line)) return std::nullopt;
  const std::size_t n = line.size();
  std::size_t i = 0;
  while (i < n) {
    const auto lead = static_cast<unsigned char>(line[i]);
    const auto at = [i] { return " at byte " + std::to_string(i + 1); };  // only on failure
    if (lead < 0x80) {
      if (lead == 0) return "NUL byte" + at();
      if ((lead < 0x20 && lead != '\t') || lead == 0x7F) {
        return "control character " + hex_byte(lead) + at();
      }
      ++i;
      continue;
    }
    // UTF-8: length from the lead byte, then continuation bytes 10xxxxxx.
    std::size_t length = 0;
    std::uint32_t code = 0;
    if ((lead & 0xE0) == 0xC0) {
      length = 2;
      code = lead & 0x1F;
    } else if ((lead & 0xF0) == 0xE0) {
      length = 3;
      code = lead & 0x0F;
    } else if ((lead & 0xF8) == 0xF0) {
      length = 4;
      code = lead & 0x07;
    } else {
      return "invalid UTF-8" + at();
    }
    if (i + length > n) return "invalid UTF-8" + at();
    for (std::size_t k = 1; k < length; ++k) {
      const auto next = static_cast<unsigned char>(line[i + k]);
      if ((next & 0xC0) != 0x80) return "invalid UTF-8" + at();
      code = (code << 6) | (next & 0x3F);
    }
    // Overlong forms, UTF-16 surrogates and code points past Unicode are not valid UTF-8.
    constexpr std::uint32_t kSmallest[5] = {0, 0, 0x80, 0x800, 0x10000};
    if (code < kSmallest[length] || (code >= 0xD800 && code <= 0xDFFF) || code > 0x10FFFF) {
      return "invalid UTF-8" + at();
    }
    if (code >= 0x80 && code <= 0x9F)
      return "control character U+00" + hex_byte(static_cast<unsigned char>(code)).substr(2) + at();
    i += length;
  }
  return std::nullopt;
}

}  // namespace stagewell
