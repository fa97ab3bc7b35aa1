#include "stagewell/line_intake.hpp"

#include <utility>
#include <variant>

namespace stagewell {

Result<LineIntake> LineIntake::create(const SourceSpec& spec, std::string source_name,
                                      Ingestor& ingestor) {
  auto parser = RecordParser::create(
      spec, [&ingestor](std::string_view site) { return ingestor.has_site(site); });
  if (!parser) return std::unexpected(parser.error());
  return LineIntake(std::move(source_name), ingestor, std::move(*parser));
}

LineIntake::LineIntake(std::string source_name, Ingestor& ingestor, RecordParser parser)
    : source_name_(std::move(source_name)), ingestor_(&ingestor), parser_(std::move(parser)) {}

Result<LineOutcome> LineIntake::take(const Line& line) {
  ParsedLine parsed = parser_.parse_line(line);
  const SourcePosition at{source_name_, line.number, line.text};
  LineOutcome out;
  if (const auto* record = std::get_if<Record>(&parsed)) {
    auto reading = ingestor_->reading(*record, at);
    if (!reading) return std::unexpected(std::move(reading.error()));
    switch (reading->kind) {
      case ReadingOutcome::Kind::stored:
        out.kind = LineOutcome::Kind::stored;
        break;
      case ReadingOutcome::Kind::duplicate:
        out.kind = LineOutcome::Kind::repeat;
        break;
      case ReadingOutcome::Kind::conflict:
        out.kind = LineOutcome::Kind::conflict;
        break;
      case ReadingOutcome::Kind::rejected:
        out.kind = LineOutcome::Kind::rejected;
        break;
    }
    out.reject_kind = reading->reject_kind;
    out.reason = std::move(reading->reason);
    return out;
  }
  if (auto* rejected = std::get_if<LineReject>(&parsed)) {
    out.kind = LineOutcome::Kind::rejected;
    out.reject_kind = name(rejected->kind);
    out.reason = std::move(rejected->reason);
  } else if (auto* error = std::get_if<Error>(&parsed)) {
    // No usable header: the stream cannot be read, but every line is kept so that nothing is lost.
    out.kind = LineOutcome::Kind::rejected;
    out.reject_kind = "bad_header";
    out.reason = std::move(error->message);
  } else {
    return out;  // a header, blank or comment line
  }
  if (auto kept = ingestor_->reject(out.reject_kind, out.reason, at); !kept) {
    return std::unexpected(std::move(kept.error()));
  }
  return out;
}

void LineIntake::skip(const Line& line) {
  if (!has_header()) parser_.parse_line(line);
}

void LineIntake::assume_header(std::string_view header) {
  parser_.parse_line(Line{header, 0, false});
}

}  // namespace stagewell
