// Gaugings (field measurements of discharge) from CSV text, for `stagewell gaugings import`.
//
// Blank lines and lines starting with '#' are skipped; the first other line is the header (a UTF-8
// byte order mark before it is ignored). Header names, matched without regard to ASCII case or
// surrounding spaces, in any order:
//   site         required: a configured site id
//   time         required: RFC 3339 with an offset (timestamp.hpp; a local time without an offset
//                is refused: a gauging sheet has no time zone of its own)
//   discharge    required: the measured discharge, >= 0, in the unit the caller says
//   stage        optional: the stage at the gauging, site's stage units; an empty field means
//                "take it from the stored readings"
//   method       optional: free text (current meter, acoustic, volumetric...)
//   uncertainty  optional: the measurement's uncertainty, percent, in (0, 100]; empty: default
//   note         optional: free text
// Any other column, a column named twice, or a required one missing refuses the whole file.
//
// Each data line becomes a GaugingLine or a GaugingLineError naming its line number and what is
// wrong; one bad line never refuses the others.
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell {

struct GaugingLine {
  std::int64_t line_number = 0;  // 1-based line of the text
  std::string site;
  std::int64_t time_ms = 0;           // ms since the epoch, UTC
  double discharge = 0.0;             // converted: discharge_factor × the written value
  std::optional<double> stage;        // site's stage units; empty: interpolate
  std::optional<double> uncertainty;  // percent; empty: the caller's default
  std::optional<std::string> method;  // empty text becomes nullopt
  std::optional<std::string> note;
};

struct GaugingLineError {
  std::int64_t line_number = 0;
  std::string reason;  // a sentence for a person, quoting the offending value
};

struct GaugingsCsv {
  std::vector<GaugingLine> gaugings;
  std::vector<GaugingLineError> errors;  // in line order
};

struct GaugingCsvOptions {
  // Whether a site id is configured.
  std::function<bool(std::string_view)> known_site;
  // Multiplies each written discharge into the unit the caller keeps (e.g. L/s → m^3/s: 0.001).
  double discharge_factor = 1.0;
};

// Parses the whole text. Fails (invalid_argument) only for a header that cannot be used or text
// with no header at all.
Result<GaugingsCsv> parse_gaugings_csv(std::string_view text, const GaugingCsvOptions& options);

}  // namespace stagewell
