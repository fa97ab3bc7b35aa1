// Reads one stream of CSV readings — a file from some offset, a tailed file, a socket — into an
// Ingestor: bytes -> lines -> records or rejects. Holds at most one line of bytes.
//
// Not thread-safe: one per stream.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "stagewell/ingestor.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/records.hpp"

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
  // stored offset, so that the header is known and line numbers stay right.
  void skip(std::string_view chunk);

  // Bytes of the stream whose lines have been completely processed (fed or skipped): the offset to
  // store as progress.
  std::int64_t consumed_bytes() const { return fed_bytes_ - splitter_.pending_bytes(); }
  std::int64_t lines() const { return lines_; }
  const std::string& source_name() const { return source_name_; }

 private:
  StreamReader(std::string source_name, Ingestor& ingestor, RecordParser parser,
               std::size_t max_line_bytes);
  void on_line(const Line& line);

  std::string source_name_;
  Ingestor& ingestor_;
  RecordParser parser_;
  LineSplitter splitter_;
  std::int64_t fed_bytes_ = 0;
  std::int64_t lines_ = 0;
  bool skipping_ = false;
  Result<void> status_;  // the first store failure, sticky
};

}  // namespace stagewell
