// Gaugings CSV → lines or errors. Numbers go through std::from_chars (locale-independent, as the
// readings' parser does: records.cpp).
#include "stagewell/gauging_csv.hpp"

#include <fmt/format.h>

#include <array>
#include <charconv>
#include <cmath>

#include "stagewell/ascii_case.hpp"
#include "stagewell/csv.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

enum Column { kSite, kTime, kDischarge, kStage, kMethod, kUncertainty, kNote, kColumns };
constexpr std::array<std::string_view, kColumns> kNames = {
    "site", "time", "discharge", "stage", "method", "uncertainty", "note"};
constexpr std::size_t kRequired = 3;  // site, time, discharge

std::string quoted(std::string_view text) {
  constexpr std::size_t kShown = 40;
  if (text.size() > kShown) return fmt::format("'{}...'", text.substr(0, kShown));
  return fmt::format("'{}'", text);
}

// A finite decimal number ('.' as the decimal point, exponent allowed), or why not.
std::optional<double> number(std::string_view text, std::string_view what, std::string& why) {
  std::string_view digits = text;
  if (digits.size() > 1 && digits.front() == '+' && digits[1] != '-') digits.remove_prefix(1);
  double value = 0.0;
  const char* end = digits.data() + digits.size();
  const auto [stop, error] = std::from_chars(digits.data(), end, value);
  if (digits.empty() || error != std::errc{} || stop != end || !std::isfinite(value)) {
    const bool comma = text.find(',') != std::string_view::npos;
    why = fmt::format("{} {} is not a finite number{}", what, quoted(text),
                      comma ? " (use '.' as the decimal point)" : "");
    return std::nullopt;
  }
  return value;
}

}  // namespace

Result<GaugingsCsv> parse_gaugings_csv(std::string_view text, const GaugingCsvOptions& options) {
  GaugingsCsv out;
  std::array<std::optional<std::size_t>, kColumns> where{};
  std::size_t header_fields = 0;
  bool have_header = false;
  std::vector<CsvField> fields;
  std::string scratch;
  std::int64_t line_number = 0;
  if (text.starts_with("\xEF\xBB\xBF")) text.remove_prefix(3);

  while (!text.empty()) {
    const auto newline = text.find('\n');
    std::string_view line = text.substr(0, newline);
    text.remove_prefix(newline == std::string_view::npos ? text.size() : newline + 1);
    ++line_number;
    if (line.ends_with('\r')) line.remove_suffix(1);
    const auto first = line.find_first_not_of(" \t");
    if (first == std::string_view::npos || line[first] == '#') continue;
    const auto refuse = [&](std::string reason) {
      out.errors.push_back({line_number, std::move(reason)});
    };
    if (const auto problem = text_problem(line)) {
      if (!have_header) return fail(ErrorKind::invalid_argument, "header: " + *problem);
      refuse(*problem);
      continue;
    }
    if (auto split = split_csv_line(line, fields); !split) {
      if (!have_header) {
        return fail(ErrorKind::invalid_argument,
                    fmt::format("line {}: the header: {}", line_number, split.error().message));
      }
      refuse(split.error().message);
      continue;
    }

    if (!have_header) {
      for (std::size_t i = 0; i < fields.size(); ++i) {
        const std::string_view name = field_text(fields[i], scratch);
        std::size_t column = 0;
        while (column < kColumns && !equal_ignoring_case(name, kNames[column])) ++column;
        if (column == kColumns) {
          return fail(ErrorKind::invalid_argument,
                      fmt::format("line {}: unknown column {} in the header; the columns are "
                                  "site, time, discharge (required), stage, method, uncertainty, "
                                  "note",
                                  line_number, quoted(name)));
        }
        if (where[column]) {
          return fail(ErrorKind::invalid_argument,
                      fmt::format("line {}: column '{}' is named twice in the header", line_number,
                                  kNames[column]));
        }
        where[column] = i;
      }
      for (std::size_t column = 0; column < kRequired; ++column) {
        if (!where[column]) {
          return fail(ErrorKind::invalid_argument,
                      fmt::format("line {}: the header has no '{}' column (site, time and "
                                  "discharge are required)",
                                  line_number, kNames[column]));
        }
      }
      header_fields = fields.size();
      have_header = true;
      continue;
    }

    if (fields.size() != header_fields) {
      refuse(fmt::format("{} fields, but the header has {}", fields.size(), header_fields));
      continue;
    }
    // Each field's text, copied: field_text may point into the shared scratch.
    const auto get = [&](Column column) -> std::optional<std::string> {
      if (!where[column]) return std::nullopt;
      return std::string(field_text(fields[*where[column]], scratch));
    };
    GaugingLine gauging;
    gauging.line_number = line_number;
    gauging.site = *get(kSite);
    if (gauging.site.empty()) {
      refuse("the site is empty");
      continue;
    }
    if (!options.known_site || !options.known_site(gauging.site)) {
      refuse(fmt::format("unknown site {}", quoted(gauging.site)));
      continue;
    }
    const std::string time_text = *get(kTime);
    const auto time_ms = parse_timestamp(time_text, nullptr);
    if (!time_ms) {
      refuse(fmt::format("time {}: {}", quoted(time_text), time_ms.error().message));
      continue;
    }
    gauging.time_ms = *time_ms;
    std::string why;
    const std::string discharge_text = *get(kDischarge);
    if (discharge_text.empty()) {
      refuse("the discharge is empty");
      continue;
    }
    const auto discharge = number(discharge_text, "discharge", why);
    if (!discharge) {
      refuse(why);
      continue;
    }
    if (*discharge < 0.0) {
      refuse(fmt::format("discharge {} is negative", quoted(discharge_text)));
      continue;
    }
    gauging.discharge = *discharge * options.discharge_factor;
    if (const auto stage_text = get(kStage); stage_text && !stage_text->empty()) {
      gauging.stage = number(*stage_text, "stage", why);
      if (!gauging.stage) {
        refuse(why);
        continue;
      }
    }
    if (const auto uncertainty_text = get(kUncertainty);
        uncertainty_text && !uncertainty_text->empty()) {
      std::string_view digits = *uncertainty_text;
      if (digits.ends_with('%')) digits.remove_suffix(1);
      while (digits.ends_with(' ')) digits.remove_suffix(1);
      gauging.uncertainty = number(digits, "uncertainty", why);
      if (!gauging.uncertainty) {
        refuse(why);
        continue;
      }
      if (!(*gauging.uncertainty > 0.0 && *gauging.uncertainty <= 100.0)) {
        refuse(fmt::format("uncertainty {} must be a percentage greater than 0 and at most 100",
                           quoted(*uncertainty_text)));
        continue;
      }
    }
    if (auto method = get(kMethod); method && !method->empty()) gauging.method = std::move(method);
    if (auto note = get(kNote); note && !note->empty()) gauging.note = std::move(note);
    out.gaugings.push_back(std::move(gauging));
  }
  if (!have_header) {
    return fail(ErrorKind::invalid_argument,
                "no header line: the first line must name the columns (site,time,discharge...)");
  }
  return out;
}

}  // namespace stagewell
