// The one way a line of CSV input reaches the store, whatever brought it (a file read, a followed
// file, a socket): line -> RecordParser -> Ingestor, and what became of the line.
//
// Each source cuts its own bytes into lines (LineSplitter) and keeps its own bookkeeping — byte
// offsets for a file's progress, line numbers and replies for a socket — and hands every line to
// its LineIntake, which it holds for the whole stream (the parser remembers the stream's header).
//
// Not thread-safe: one per stream, used on the thread that owns the Ingestor.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/ingestor.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/records.hpp"
#include "stagewell/result.hpp"
#include "stagewell/units.hpp"

namespace stagewell {

// What became of one line.
struct LineOutcome {
  enum class Kind {
    not_data,  // a header, blank or comment line: nothing to store
    stored,    // a new reading, in the Ingestor's open batch
    repeat,    // a reading whose site, time and stage are stored already: nothing done
    conflict,  // a reading whose site and time are stored with another stage (which is kept):
               // the line is kept in rejects
    rejected,  // not a usable reading: the line is kept in rejects
  };
  Kind kind = Kind::not_data;
  // conflict and rejected: the reject's kind as counted and answered ("bad_stage", "too_long",
  // "bad_header", "conflict", ...) and a sentence for a person.
  std::string_view reject_kind;
  std::string reason;

  // True when the line is a reading or a reject, that is, something the store settles (a socket
  // source acknowledges such a line once its batch is committed).
  bool reached_store() const { return kind != Kind::not_data; }
};

class LineIntake {
 public:
  // `source_name` names the stream in rejects ("var/incoming/a.csv", "tcp 127.0.0.1:50312"). The
  // Ingestor must outlive the intake. Fails when the source's time zone is unknown.
  static Result<LineIntake> create(const SourceSpec& spec, std::string source_name,
                                   Ingestor& ingestor);

  // Parses `line` and stores it: a reading through Ingestor::reading(), anything unusable as a
  // reject. Fails only when the store fails (the batch is then spoiled: Ingestor::commit()).
  Result<LineOutcome> take(const Line& line);
  // Reads `line` for the stream's header only, storing nothing (resuming a stream past lines
  // already stored).
  void skip(const Line& line);
  // Takes `header` as the stream's header line, as if it had come first (a socket client that
  // sends none). REQUIRES: no header yet (!has_header()).
  void assume_header(std::string_view header);
  // True once the stream's columns are known.
  bool has_header() const { return parser_.columns().has_value(); }

  const std::string& source_name() const { return source_name_; }

 private:
  LineIntake(std::string source_name, Ingestor& ingestor, RecordParser parser,
             std::optional<units::Length> stage_units);
  // The record's stage in its site's stage units, from the source's stage_units.
  double site_stage(const Record& record);

  std::string source_name_;
  Ingestor* ingestor_;
  RecordParser parser_;
  std::optional<units::Length> stage_units_;  // SourceSpec::stage_units
  // The last site converted for, and the integers its stages are multiplied and divided by.
  std::string factor_site_;
  std::int64_t multiply_by_ = 1;
  std::int64_t divide_by_ = 1;
};

}  // namespace stagewell
