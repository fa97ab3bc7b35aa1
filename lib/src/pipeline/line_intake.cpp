#include "stagewell/line_intake.hpp"

#include <cmath>
#include <numeric>
#include <utility>
#include <variant>

namespace stagewell {

namespace {

// A length unit in micrometres: an integer for every unit there is (the inch is 25.4 mm exactly,
// by the international yard and pound agreement of 1959), so that a conversion is one multiply or
// divide by an exact integer where it can be — 45.2 cm becomes 45.2 / 100 m, the double nearest
// to that quotient.
std::int64_t micrometres(units::Length unit) { return std::llround(units::to_m(unit) * 1e6); }

}  // namespace

Result<LineIntake> LineIntake::create(const SourceSpec& spec, std::string source_name,
                                      Ingestor& ingestor) {
  auto parser = RecordParser::create(
      spec, [&ingestor](std::string_view site) { return ingestor.has_site(site); });
  if (!parser) return std::unexpected(parser.error());
  return LineIntake(std::move(source_name), ingestor, std::move(*parser), spec.stage_units);
}

LineIntake::LineIntake(std::string source_name, Ingestor& ingestor, RecordParser parser,
                       std::optional<units::Length> stage_units)
    : source_name_(std::move(source_name)),
      ingestor_(&ingestor),
      parser_(std::move(parser)),
      stage_units_(stage_units) {}

double LineIntake::site_stage(const Record& record) {
  if (!stage_units_) return record.stage;
  if (record.site != factor_site_) {
    // The parser passes only configured sites.
    const SiteConfig* site = ingestor_->config().find_site(record.site);
    const std::int64_t from = micrometres(*stage_units_);
    const std::int64_t to = site ? micrometres(site->stage.units) : from;
    const std::int64_t common = std::gcd(from, to);
    multiply_by_ = from / common;
    divide_by_ = to / common;
    factor_site_ = std::string(record.site);
  }
  double stage = record.stage;
  if (multiply_by_ != 1) stage *= static_cast<double>(multiply_by_);
  if (divide_by_ != 1) stage /= static_cast<double>(divide_by_);
  return stage;
}

Result<LineOutcome> LineIntake::take(const Line& line) {
  ParsedLine parsed = parser_.parse_line(line);
  const SourcePosition at{source_name_, line.number, line.text};
  LineOutcome out;
  if (auto* record = std::get_if<Record>(&parsed)) {
    record->stage = site_stage(*record);
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
