// Reads one file's stream of CSV readings — a file from some offset, a followed file — into an
// Ingestor: bytes -> lines -> LineIntake (line_intake.hpp), keeping the byte offset that the
// lines processed reach, for the source's progress. Holds at most one line of bytes (two for a
// line over the limit: see consumed_bytes()).
//
// Not thread-safe: one per stream.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/byte_fingerprint.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/line_intake.hpp"
#include "stagewell/line_splitter.hpp"

namespace stagewell {

class StreamReader {
 public:
  // `source_name` names the stream in rejects ("var/incoming/a.csv"). Fails when the source's
  // time zone is unknown.
  static Result<std::unique_ptr<StreamReader>> create(
      const SourceSpec& spec, std::string source_name, Ingestor& ingestor,
      std::size_t max_line_bytes = kDefaultMaxLineBytes);

  // Processes every line that `chunk` completes. Fails only when the store fails (the batch is
  // then spoiled: see Ingestor::commit()).
  Result<void> feed(std::string_view chunk);
  // End of the stream: a last line without a newline is processed too.
  Result<void> finish();
  // Reads `chunk` for its header and line count only, storing nothing: for resuming a stream at a
  // stored offset (a consumed_bytes() value), so that the header is known and line numbers stay
  // right. When the offset includes a last line without a newline (finish() processed it), a
  // finish() with nothing fed after the skip does not process that line again.
  void skip(std::string_view chunk);

  // Bytes of the stream whose lines have been completely processed (fed or skipped): the offset to
  // store as progress. Always the end of a line: through its '\n', or the end of the stream after
  // finish(). A line over the limit is held back whole — its reject is made only when its end
  // arrives — so that a restart never resumes inside a line nor repeats the reject of one.
  std::int64_t consumed_bytes() const { return consumed_bytes_; }
  // The fingerprint of the first consumed_bytes() bytes of the stream (fed or skipped): stored
  // with the progress, it tells a file that only grew from one rewritten.
  const ByteFingerprint& consumed_fingerprint() const { return consumed_fingerprint_; }
  std::int64_t lines() const { return lines_; }

  // Told what became of every line processed (not of lines skipped), after the Ingestor took it:
  // for a summary of the stream. Empty: nobody is told.
  using LineObserver = std::function<void(const Line& line, const LineOutcome& outcome)>;
  void set_line_observer(LineObserver observer) { observer_ = std::move(observer); }
  const std::string& source_name() const { return intake_.source_name(); }

 private:
  StreamReader(LineIntake intake, std::size_t max_line_bytes);
  void on_line(const Line& line);
  void process(const Line& line);
  // Counts the line ends in `chunk` (just fed or skipped) and moves consumed_bytes_ past the last.
  void note_line_ends(std::string_view chunk);
  // Adds `chunk`, which began at byte `start` of the stream, to the fingerprints: the fed bytes',
  // and the consumed bytes' up to consumed_bytes_. REQUIRES: consumed_bytes_ is up to date.
  void fingerprint(std::string_view chunk, std::int64_t start);
  void release_held();

  // A line over the limit whose end has not arrived yet: its first max_line_bytes bytes.
  struct HeldLine {
    std::string text;
    std::int64_t number = 0;
  };

  LineIntake intake_;
  LineSplitter splitter_;
  std::int64_t fed_bytes_ = 0;       // fed or skipped
  std::int64_t consumed_bytes_ = 0;  // see consumed_bytes()
  std::int64_t line_ends_ = 0;       // '\n' bytes fed or skipped: line N ends at the N-th
  std::int64_t lines_ = 0;
  std::optional<HeldLine> held_;
  ByteFingerprint fed_fingerprint_;       // of the fed_bytes_ bytes
  ByteFingerprint consumed_fingerprint_;  // of the consumed_bytes_ bytes
  LineObserver observer_;
  bool skipping_ = false;
  bool skipped_to_line_end_ = true;  // false: the skip stopped after a line finish() processed
  Result<void> status_;              // the first store failure, sticky
};

}  // namespace stagewell
