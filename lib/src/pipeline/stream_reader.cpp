#include "stagewell/stream_reader.hpp"

#include <fmt/format.h>

#include <algorithm>

namespace stagewell {

Result<std::unique_ptr<StreamReader>> StreamReader::create(const SourceSpec& spec,
                                                           std::string source_name,
                                                           Ingestor& ingestor,
                                                           std::size_t max_line_bytes) {
  auto intake = LineIntake::create(spec, std::move(source_name), ingestor);
  if (!intake) return std::unexpected(intake.error());
  return std::unique_ptr<StreamReader>(new StreamReader(std::move(*intake), max_line_bytes));
}

StreamReader::StreamReader(LineIntake intake, std::size_t max_line_bytes)
    : intake_(std::move(intake)), splitter_(max_line_bytes) {}

Result<void> StreamReader::feed(std::string_view chunk) {
  if (chunk.empty()) return status_;
  skipped_to_line_end_ = true;  // the stream goes on: whatever the skip ended in continues
  const std::int64_t start = fed_bytes_;
  fed_bytes_ += static_cast<std::int64_t>(chunk.size());
  splitter_.feed(chunk, [this](const Line& line) { on_line(line); });
  note_line_ends(chunk);
  // A held line whose end came in this chunk, with no later line after it to release it.
  if (held_ && line_ends_ >= held_->number) release_held();
  fingerprint(chunk, start);
  return status_;
}

Result<void> StreamReader::finish() {
  // After a skip that ended past a last line without a newline, that line was processed by the
  // finish() of an earlier run (its bytes are in the stored offset): only count it.
  skipping_ = !skipped_to_line_end_;
  splitter_.finish([this](const Line& line) { on_line(line); });
  skipping_ = false;
  if (held_) release_held();  // the end of the stream ends a held line too
  consumed_bytes_ = fed_bytes_;
  consumed_fingerprint_ = fed_fingerprint_;
  return status_;
}

void StreamReader::skip(std::string_view chunk) {
  skipping_ = true;
  fed_fingerprint_.add(chunk);
  consumed_fingerprint_ = fed_fingerprint_;
  fed_bytes_ += static_cast<std::int64_t>(chunk.size());
  splitter_.feed(chunk, [this](const Line& line) { on_line(line); });
  note_line_ends(chunk);
  skipping_ = false;
  skipped_to_line_end_ = splitter_.pending_bytes() == 0;
  consumed_bytes_ = fed_bytes_;  // skipped bytes were consumed before, by definition
}

void StreamReader::note_line_ends(std::string_view chunk) {
  const auto ends = std::count(chunk.begin(), chunk.end(), '\n');
  if (ends == 0) return;
  line_ends_ += ends;
  const auto after_last = static_cast<std::int64_t>(chunk.size() - (chunk.rfind('\n') + 1));
  consumed_bytes_ = fed_bytes_ - after_last;
}

void StreamReader::fingerprint(std::string_view chunk, std::int64_t start) {
  // consumed_bytes_ only moves forward, to a line end: when it is inside this chunk, the bytes
  // before it finish the consumed fingerprint; when it is before the chunk (a held line goes on),
  // the consumed fingerprint stays as it was.
  if (consumed_bytes_ < start) {
    fed_fingerprint_.add(chunk);
    return;
  }
  const auto split = static_cast<std::size_t>(consumed_bytes_ - start);
  fed_fingerprint_.add(chunk.substr(0, split));
  consumed_fingerprint_ = fed_fingerprint_;
  fed_fingerprint_.add(chunk.substr(split));
}

void StreamReader::release_held() {
  const HeldLine held = std::move(*held_);
  held_.reset();
  process(Line{held.text, held.number, /*too_long=*/true});
}

void StreamReader::on_line(const Line& line) {
  if (held_ && line.number > held_->number) release_held();  // a later line: the held one ended
  ++lines_;
  if (!status_) return;  // the batch is spoiled: nothing more can be stored until a reset
  if (skipping_ && intake_.has_header()) return;  // already past the header: just count
  if (line.too_long && !skipping_) {
    // Reported as soon as it is known to be too long, which is before its end has arrived: its
    // reject waits for the end, so that it is stored with the progress past the whole line.
    held_ = HeldLine{std::string(line.text), line.number};
    return;
  }
  process(line);
}

void StreamReader::process(const Line& line) {
  if (!status_) return;
  if (skipping_) {
    intake_.skip(line);
    return;
  }
  // What became of the line matters to a socket's replies and to a summary, not to a file's
  // progress: only a failure of the store does.
  auto taken = intake_.take(line);
  if (!taken) {
    status_ = std::unexpected(std::move(taken.error()));
    return;
  }
  if (observer_) observer_(line, *taken);
}

}  // namespace stagewell
