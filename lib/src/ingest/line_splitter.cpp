// Lines that fall wholly inside one chunk are handed on as views into the chunk (no copy); only a
// line split across chunks is gathered in `pending_`, which never exceeds max_line_bytes + 1 bytes
// (the +1 is a '\r' that may be half of "\r\n").
#include "stagewell/line_splitter.hpp"

namespace stagewell {

LineSplitter::LineSplitter(std::size_t max_line_bytes)
    : max_line_bytes_(max_line_bytes == 0 ? 1 : max_line_bytes) {}

void LineSplitter::feed(std::string_view chunk, const LineSink& sink) {
  while (!chunk.empty()) {
    const std::size_t newline = chunk.find('\n');
    const bool ends = newline != std::string_view::npos;
    const std::string_view piece = chunk.substr(0, ends ? newline : chunk.size());
    chunk.remove_prefix(ends ? newline + 1 : chunk.size());

    if (discarding_) {
      if (ends) {
        discarding_ = false;
        ++next_number_;
      }
      continue;
    }

    // A trailing '\r' is not content if it ends the line, and may not be yet if the line goes on.
    const std::size_t total = pending_.size() + piece.size();
    const char last = !piece.empty() ? piece.back() : (pending_.empty() ? '\0' : pending_.back());
    const std::size_t content = last == '\r' ? total - 1 : total;
    if (content > max_line_bytes_) {
      overflow(piece, sink);
      if (ends) {
        ++next_number_;
      } else {
        discarding_ = true;
      }
      continue;
    }
    if (!ends) {
      pending_.append(piece);
      continue;
    }

    std::string_view text = piece;
    if (!pending_.empty()) {
      pending_.append(piece);
      text = pending_;
    }
    if (!text.empty() && text.back() == '\r') text.remove_suffix(1);
    sink(Line{text, next_number_++, false});
    pending_.clear();
  }
}

void LineSplitter::finish(const LineSink& sink) {
  if (!discarding_ && !pending_.empty()) {
    std::string_view text = pending_;
    if (text.back() == '\r') text.remove_suffix(1);
    sink(Line{text, next_number_++, false});
  }
  discarding_ = false;
  pending_.clear();
}

void LineSplitter::overflow(std::string_view piece, const LineSink& sink) {
  if (pending_.size() < max_line_bytes_) {
    pending_.append(piece.substr(0, max_line_bytes_ - pending_.size()));
  }
  sink(Line{std::string_view(pending_).substr(0, max_line_bytes_), next_number_, true});
  pending_.clear();
}

}  // namespace stagewell
