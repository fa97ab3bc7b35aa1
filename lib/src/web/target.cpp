// Request targets: origin-form only (RFC 9112, 3.2.1), percent-decoding (RFC 3986, 2.1).
#include "web/target.hpp"

#include <fmt/format.h>

namespace stagewell::web_detail {
namespace {

int hex_value(char c) {
  if (c >= '0' && c <= '9') return c - '0';
  if (c >= 'a' && c <= 'f') return c - 'a' + 10;
  if (c >= 'A' && c <= 'F') return c - 'A' + 10;
  return -1;
}

// Decodes %XX escapes. '+' stays '+' (RFC 3986 gives it no meaning in a query; "+ for a space"
// belongs to HTML forms, which this API does not take), so that an offset written as is,
// from=2026-05-01T00:00:00+02:00, means what it says. A decoded '/' or '\' in a path segment is
// refused: it would let one segment pass for two.
Result<std::string> decode(std::string_view text, bool in_query) {
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (c == '%') {
      if (i + 2 >= text.size() || hex_value(text[i + 1]) < 0 || hex_value(text[i + 2]) < 0) {
        return fail(ErrorKind::invalid_argument, "a '%' escape needs two hexadecimal digits");
      }
      const int high = hex_value(text[i + 1]);
      const int low = hex_value(text[i + 2]);
      const char decoded = static_cast<char>(high * 16 + low);
      if (!in_query && (decoded == '/' || decoded == '\\')) {
        return fail(ErrorKind::invalid_argument,
                    "encoded slashes (%2F, %5C) are not accepted in a path");
      }
      if (static_cast<unsigned char>(decoded) < 0x20 || decoded == 0x7F) {
        return fail(ErrorKind::invalid_argument, "control characters are not accepted");
      }
      out += decoded;
      i += 2;
    } else {
      out += c;
    }
  }
  return out;
}

}  // namespace

std::optional<std::string> Target::param(std::string_view name) const {
  for (const auto& [key, value] : query) {
    if (key == name) return value;
  }
  return std::nullopt;
}

Result<Target> parse_target(std::string_view target) {
  if (target.empty() || target.front() != '/') {
    return fail(ErrorKind::invalid_argument, "the request target must be a path starting with '/'");
  }
  for (const char c : target) {
    const auto u = static_cast<unsigned char>(c);
    if (u <= 0x20 || u >= 0x7F || c == '\\' || c == '#') {
      return fail(ErrorKind::invalid_argument,
                  "the request target has a character that must be percent-encoded");
    }
  }
  const auto question = target.find('?');
  const std::string_view path = target.substr(0, question);
  const std::string_view query =
      question == std::string_view::npos ? std::string_view() : target.substr(question + 1);

  Target out;
  std::size_t start = 1;
  while (start <= path.size()) {
    const auto slash = path.find('/', start);
    const auto raw = path.substr(start, slash == std::string_view::npos ? slash : slash - start);
    auto segment = decode(raw, false);
    if (!segment) return std::unexpected(segment.error());
    if (*segment == "." || *segment == "..") {
      return fail(ErrorKind::invalid_argument, "'.' and '..' are not accepted in a path");
    }
    // An empty last segment ("/api/sites/") is the same resource; an empty one inside is not.
    if (segment->empty() && slash != std::string_view::npos) {
      return fail(ErrorKind::not_found, "no such path");
    }
    if (!segment->empty()) out.segments.push_back(std::move(*segment));
    if (slash == std::string_view::npos) break;
    start = slash + 1;
  }

  std::size_t at = 0;
  while (at < query.size()) {
    const auto amp = query.find('&', at);
    const auto pair = query.substr(at, amp == std::string_view::npos ? amp : amp - at);
    at = amp == std::string_view::npos ? query.size() : amp + 1;
    if (pair.empty()) continue;
    const auto equals = pair.find('=');
    auto key = decode(pair.substr(0, equals), true);
    if (!key) return std::unexpected(key.error());
    auto value = decode(equals == std::string_view::npos ? "" : pair.substr(equals + 1), true);
    if (!value) return std::unexpected(value.error());
    // Which of two values would be meant cannot be told: refused rather than one chosen.
    for (const auto& [earlier, ignored] : out.query) {
      if (earlier == *key) {
        return fail(ErrorKind::invalid_argument,
                    fmt::format("the query parameter \"{}\" is given twice; give it once", *key));
      }
    }
    out.query.emplace_back(std::move(*key), std::move(*value));
  }
  return out;
}

}  // namespace stagewell::web_detail
