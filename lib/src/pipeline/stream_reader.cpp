#include "stagewell/stream_reader.hpp"

#include <fmt/format.h>

#include <variant>

namespace stagewell {

Result<std::unique_ptr<StreamReader>> StreamReader::create(const SourceSpec& spec,
                                                           std::string source_name,
                                                           Ingestor& ingestor,
                                                           std::size_t max_line_bytes) {
  auto parser = RecordParser::create(
      spec, [&ingestor](std::string_view site) { return ingestor.has_site(site); });
  if (!parser) return std::unexpected(parser.error());
  return std::unique_ptr<StreamReader>(
      new StreamReader(std::move(source_name), ingestor, std::move(*parser), max_line_bytes));
}

StreamReader::StreamReader(std::string source_name, Ingestor& ingestor, RecordParser parser,
                           std::size_t max_line_bytes)
    : source_name_(std::move(source_name)),
      ingestor_(ingestor),
      parser_(std::move(parser)),
      splitter_(max_line_bytes) {}

Result<void> StreamReader::feed(std::string_view chunk) {
  fed_bytes_ += static_cast<std::int64_t>(chunk.size());
  splitter_.feed(chunk, [this](const Line& line) { on_line(line); });
  return status_;
}

Result<void> StreamReader::finish() {
  splitter_.finish([this](const Line& line) { on_line(line); });
  return status_;
}

void StreamReader::skip(std::string_view chunk) {
  skipping_ = true;
  fed_bytes_ += static_cast<std::int64_t>(chunk.size());
  splitter_.feed(chunk, [this](const Line& line) { on_line(line); });
  skipping_ = false;
}

void StreamReader::on_line(const Line& line) {
  ++lines_;
  if (!status_) return;  // the batch is spoiled: nothing more can be stored until a reset
  if (skipping_ && parser_.columns()) return;  // already past the header: just count
  const ParsedLine parsed = parser_.parse_line(line);
  if (skipping_) return;
  const SourcePosition at{source_name_, line.number, line.text};
  if (const auto* record = std::get_if<Record>(&parsed)) {
    status_ = ingestor_.reading(*record, at);
  } else if (const auto* reject = std::get_if<LineReject>(&parsed)) {
    status_ = ingestor_.reject(name(reject->kind), reject->reason, at);
  } else if (const auto* error = std::get_if<Error>(&parsed)) {
    // No usable header: the stream cannot be read, but every line is kept so nothing is lost.
    status_ = ingestor_.reject("bad_header", error->message, at);
  }
}

}  // namespace stagewell
