// The protocol of a `type: tcp` source, for one connection, without the socket: bytes in (any
// split), lines through the LineIntake (line_intake.hpp), replies out as text. See
// docs/tcp-protocol.md, "Readings over TCP". The service's TcpSession (daemon/stagewelld/) owns the
// socket, its buffers and timers, and hands this object the bytes it reads and the commits it hears
// of.
//
// Client -> service, one line each, ending in "\n" or "\r\n":
//   auth <secret>       first, when the source has a secret (otherwise allowed and ignored)
//   site,time,stage     an optional header naming the columns (the source's `columns`), then
//   <readings>          CSV lines as in files; blank lines and '#' comments are allowed
// Lines after `auth` are numbered 1, 2, 3... in arrival order, per connection (every line counts:
// header, blank, comment, reading).
//
// Service -> client:
//   ok <n>                       lines 1..n are stored (readings, repeats of stored readings,
//                                rejects kept in the database, header and comments)
//   error <n> <kind> <reason>    line n was rejected (also kept in the database's rejects); sent
//                                at once; it is covered by a later `ok`. Kind `conflict`: the
//                                site and time are stored with another stage, which is kept
//   refused <what> <reason>      the connection is not taken ("auth" or "busy"); then closed
//   closing <reason>             the service closes the connection; lines after the last `ok`
//                                are not stored: send them again on a new connection
//
// The first line that is neither blank nor a comment is the header if it names the time and stage
// columns (as a file's header does); otherwise the columns are the source's, in the order site
// (unless the source has a fixed site), time, stage, and that line is the first reading.
//
// Not thread-safe: a plain object (no socket, no I/O of its own) belonging to one connection, and
// called on the thread that owns the Ingestor.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/config.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/line_intake.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/result.hpp"

namespace stagewell {

// The replies, one line each with its "\n". Control bytes in a reason become '?', and a long
// reason is cut, so that a reply is always one line.
namespace reply {
std::string ok(std::int64_t line);
std::string error(std::int64_t line, std::string_view kind, std::string_view reason);
std::string refused(std::string_view what, std::string_view reason);
std::string closing(std::string_view reason);
// The `closing` line after the store failed: the lines after the last `ok` must be sent again.
std::string store_failed();
}  // namespace reply

// True when `given` equals `secret`. Takes the same time wherever they first differ (it depends
// only on the lengths), so timing cannot reveal a secret character by character.
bool same_secret(std::string_view given, std::string_view secret);

class TcpIntake {
 public:
  // `source_name` names the connection in rejects: "tcp 127.0.0.1:50312". The Ingestor must
  // outlive every call that feeds. Fails when the source's time zone is unknown.
  static Result<TcpIntake> create(const SourceSpec& spec, std::string source_name,
                                  Ingestor& ingestor);

  // Processes every line that `bytes` completes; appends `error` lines and a refusal to
  // `replies`. Fails only when the store fails (the open batch is then spoiled:
  // Ingestor::commit()); the connection is then to be closed with reply::store_failed().
  Result<void> feed(std::string_view bytes, std::string& replies);
  // The client will send nothing more: a last line without a newline is processed too.
  Result<void> finish(std::string& replies);

  // The batch holding every line fed so far has been committed.
  void committed();
  // Appends `ok <n>` when more lines are known stored than were last reported.
  void report_ack(std::string& replies);
  // The open batch was dropped (a failed commit, Ingestor::reset()). When some line of this
  // connection was in it, appends the last `ok` (if not yet sent) and reply::store_failed(), reads
  // nothing more, and returns true: the connection is to be closed, so that its client sends
  // those lines again. Otherwise returns false and nothing changes.
  bool batch_dropped(std::string& replies);

  // Some line fed went into a batch not yet committed (it is lost if that batch is dropped).
  bool awaiting_commit() const { return last_stored_line_ > acked_; }
  // Why the connection was refused (no secret in it), once it was.
  const std::optional<std::string>& refusal() const { return refusal_; }
  bool authenticated() const { return authenticated_; }
  std::int64_t lines() const { return number_; }
  std::int64_t acked() const { return acked_; }

 private:
  TcpIntake(const SourceSpec& spec, LineIntake intake);
  void on_line(const Line& line);
  bool authenticate(const Line& line);  // true when the line was the connection's `auth` line
  void choose_columns(const Line& line);
  void refuse(std::string_view reason);

  std::optional<std::string> secret_;
  ColumnNames columns_;
  bool need_site_ = true;       // no fixed site: lines carry one
  std::string default_header_;  // the header assumed when the client sends none
  LineIntake intake_;
  LineSplitter splitter_;
  std::string* replies_ = nullptr;  // where on_line writes, during feed() and finish()
  bool authenticated_ = false;
  bool dropped_ = false;  // lines of it were in a dropped batch: nothing more is read
  std::optional<std::string> refusal_;
  std::int64_t number_ = 0;            // lines counted so far (the client's numbering)
  std::int64_t last_stored_line_ = 0;  // last line that went to the store (reading or reject)
  std::int64_t acked_ = 0;             // lines 1..acked_ are stored
  std::int64_t reported_ = 0;          // the last `ok` sent
  Result<void> status_;                // the first store failure, sticky
};

}  // namespace stagewell
