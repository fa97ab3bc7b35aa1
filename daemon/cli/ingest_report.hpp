// What `stagewell ingest` says about each file it reads: the lines it stored, found stored
// already, and rejected (by kind, with the first few reasons), told line by line as the pipeline
// settles them (StreamReader::LineObserver), and whether the file gave any reading at all.
#pragma once

#include <cstdint>
#include <map>
#include <ostream>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/line_intake.hpp"

namespace stagewell::cli {

// How many different reject reasons a file's report quotes.
inline constexpr std::size_t kReasonsShown = 5;

class FileReport {
 public:
  // Counts one line the pipeline settled.
  void add(const Line& line, const LineOutcome& outcome);

  // True when the file had rejected lines and not one reading (stored now, or stored before).
  bool nothing_usable() const { return rejected_ > 0 && stored_ == 0 && repeats_ == 0; }
  std::int64_t rejected() const { return rejected_; }

  // On `out` (stderr): when lines were rejected, a line of counts by kind, the first reasons as
  // "<name>:<line>: <kind>: <reason>", and what to do when nothing was usable. Nothing otherwise.
  void print(std::ostream& out, std::string_view name) const;

 private:
  struct Reason {
    std::int64_t line = 0;
    std::string kind;
    std::string text;
  };
  std::int64_t stored_ = 0;
  std::int64_t repeats_ = 0;
  std::int64_t rejected_ = 0;
  std::map<std::string, std::int64_t, std::less<>> rejected_by_kind_;
  std::vector<Reason> reasons_;     // the first kReasonsShown different ones
  std::int64_t other_reasons_ = 0;  // rejected lines whose reason is not among them
};

}  // namespace stagewell::cli
