#include "ingest_report.hpp"

#include <fmt/format.h>

#include <algorithm>

namespace stagewell::cli {
namespace {

// A reason without its kind, which the report gives before it ("conflict: ...").
std::string_view without_kind(std::string_view reason, std::string_view kind) {
  const std::string prefix = fmt::format("{}: ", kind);
  if (reason.starts_with(prefix)) reason.remove_prefix(prefix.size());
  return reason;
}

// A reason without its line, when the report gives the same before it ("line 1: the header has
// no ..." for a header that names no usable columns, quoted at line 1).
std::string_view without_line(std::string_view reason, std::int64_t line) {
  const std::string prefix = fmt::format("line {}: ", line);
  if (reason.starts_with(prefix)) reason.remove_prefix(prefix.size());
  return reason;
}

}  // namespace

void FileReport::add(const Line& line, const LineOutcome& outcome) {
  switch (outcome.kind) {
    case LineOutcome::Kind::not_data:
      return;
    case LineOutcome::Kind::stored:
      ++stored_;
      return;
    case LineOutcome::Kind::repeat:
      ++repeats_;
      return;
    case LineOutcome::Kind::conflict:
    case LineOutcome::Kind::rejected:
      break;
  }
  ++rejected_;
  ++rejected_by_kind_[std::string(outcome.reject_kind)];
  // A header without usable columns gives every line the same reason: it is quoted once.
  const std::string_view text = without_kind(outcome.reason, outcome.reject_kind);
  const bool known = std::any_of(reasons_.begin(), reasons_.end(), [&](const Reason& shown) {
    return shown.kind == outcome.reject_kind && shown.text == text;
  });
  if (known) return;
  if (reasons_.size() < kReasonsShown) {
    reasons_.push_back({line.number, std::string(outcome.reject_kind), std::string(text)});
  } else {
    ++other_reasons_;
  }
}

void FileReport::print(std::ostream& out, std::string_view name) const {
  if (rejected_ == 0) return;
  std::string kinds;
  for (const auto& [kind, count] : rejected_by_kind_) {
    kinds += fmt::format("{}{} {}", kinds.empty() ? "" : ", ", kind, count);
  }
  out << fmt::format("{}: {} line(s) rejected ({}); {} reading(s) stored, {} already stored\n",
                     name, rejected_, kinds, stored_, repeats_);
  for (const auto& reason : reasons_) {
    out << fmt::format("{}:{}: {}: {}\n", name, reason.line, reason.kind,
                       without_line(reason.text, reason.line));
  }
  if (other_reasons_ > 0) {
    out << fmt::format("{}: {} more rejected line(s) with other reasons\n", name, other_reasons_);
  }
  if (nothing_usable()) {
    const bool header = rejected_by_kind_.contains("bad_header");
    out << fmt::format(
        "{}: no line could be used{}; every line is kept in the `rejects` view\n", name,
        header ? " (--columns names its columns, --site its site when it has no site column)" : "");
  }
}

}  // namespace stagewell::cli
