// Splits a byte stream that arrives in arbitrary chunks (file reads, socket reads) into lines,
// holding at most one line's worth of bytes. A line ends at '\n'; a '\r' just before it is dropped,
// so "\r\n" files read like "\n" files. A line longer than the limit is reported once, as soon as
// it is known to be too long, and its remaining bytes are discarded up to the next '\n'.
//
// Not thread-safe: one splitter per stream.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <string>
#include <string_view>

namespace stagewell {

inline constexpr std::size_t kDefaultMaxLineBytes = 4096;

struct Line {
  // The line without its terminator. For a too-long line, its first max_line_bytes bytes.
  // Valid only during the callback.
  std::string_view text;
  std::int64_t number = 0;  // 1-based, counting every line including blank ones
  bool too_long = false;
};

using LineSink = std::function<void(const Line&)>;

class LineSplitter {
 public:
  // `max_line_bytes` counts the bytes of a line without its "\n" or "\r\n". REQUIRES: > 0.
  explicit LineSplitter(std::size_t max_line_bytes = kDefaultMaxLineBytes);

  // Calls `sink` for every line completed by `chunk` (and once for a line that becomes too long).
  void feed(std::string_view chunk, const LineSink& sink);
  // End of the stream: a last line without a '\n' is passed on as a line.
  void finish(const LineSink& sink);

  std::size_t max_line_bytes() const { return max_line_bytes_; }
  // Bytes held for an unfinished line (at most max_line_bytes + 1).
  std::size_t pending_bytes() const { return pending_.size(); }

 private:
  void overflow(std::string_view more, const LineSink& sink);

  std::size_t max_line_bytes_;
  std::string pending_;      // start of a line that a later chunk will finish
  bool discarding_ = false;  // inside a too-long line that has been reported
  std::int64_t next_number_ = 1;
};

}  // namespace stagewell
