// A logger file of any bytes through the record parser (records.hpp), the way a file source reads
// it: LineSplitter, then RecordParser line by line, fed in pieces whose sizes come from the input.
// Checked on every input, from the parser's documented contract:
//  - every record names a configured site (or the source's fixed site) and has a finite stage;
//  - line numbers only grow, and a record's number is its line's;
//  - once the header is refused (an Error), every later line gives an Error too;
//  - splitting the bytes differently gives the same records and rejects.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "fuzz_support.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/records.hpp"

namespace {

using stagewell::fuzz::harness_failed;

void expect(bool holds, const char* what) {
  if (!holds) harness_failed(what);
}

bool known(std::string_view site) { return site == "g1" || site == "raceway-2"; }

// What a stream gave, line by line, as text (to compare two splittings).
std::vector<std::string> parse(std::string_view bytes, const stagewell::SourceSpec& spec,
                               std::size_t max_line, std::size_t piece) {
  auto parser = stagewell::RecordParser::create(spec, known);
  if (!parser) harness_failed(parser.error().message);
  stagewell::LineSplitter splitter(max_line);
  std::vector<std::string> out;
  std::int64_t last_number = 0;
  bool fatal = false;
  const stagewell::LineSink sink = [&](const stagewell::Line& line) {
    expect(line.number > last_number, "line numbers did not grow");
    last_number = line.number;
    const auto parsed = parser->parse_line(line);
    if (fatal) expect(std::holds_alternative<stagewell::Error>(parsed), "read on after an Error");
    if (const auto* record = std::get_if<stagewell::Record>(&parsed)) {
      expect(std::isfinite(record->stage), "a record with a stage that is not finite");
      expect(record->line_number == line.number, "a record with another line's number");
      expect(spec.site ? record->site == *spec.site : known(record->site),
             "a record for a site that is not configured");
      out.push_back("R " + std::string(record->site) + " " + std::to_string(record->time_ms) +
                    " " + std::to_string(record->stage));
    } else if (const auto* reject = std::get_if<stagewell::LineReject>(&parsed)) {
      expect(!reject->reason.empty(), "a reject without a reason");
      out.push_back("X " + std::string(stagewell::name(reject->kind)) + " " +
                    std::to_string(reject->line_number));
    } else if (std::holds_alternative<stagewell::Error>(parsed)) {
      fatal = true;
      out.push_back("E");
    } else if (std::holds_alternative<stagewell::ColumnMap>(parsed)) {
      out.push_back("H");
    }
  };
  for (std::size_t at = 0; at < bytes.size(); at += piece) splitter.feed(bytes.substr(at, piece), sink);
  splitter.finish(sink);
  return out;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 2) return 0;
  // The first byte chooses the source: which columns, a fixed site, a local time zone, and the
  // size of the pieces the bytes arrive in; the rest is the file.
  const unsigned choice = data[0];
  const std::string_view bytes(reinterpret_cast<const char*>(data + 1), size - 1);
  stagewell::SourceSpec spec;
  if (choice & 1) spec.site = "g1";
  if (choice & 2) spec.time_zone = "America/Denver";
  if (choice & 4) spec.columns = {"Station", "Timestamp (UTC)", "Level"};
  const std::size_t max_line = (choice & 8) ? 64 : 4096;
  const std::size_t piece = 1 + (choice >> 4);

  const auto whole = parse(bytes, spec, max_line, bytes.size());
  const auto pieces = parse(bytes, spec, max_line, piece);
  expect(whole == pieces, "the same bytes split differently gave different results");
  return 0;
}
