// The writer's side of the tcp sources: each connection's protocol (bytes -> lines -> the
// Ingestor -> replies), fed by the loop one chunk at a time (tcp_link.hpp), and its
// acknowledgements, which follow the Ingestor's commits.
//
// Acknowledgement: a connection's lines are stored once the batch holding them is committed; then
// it is sent `ok <n>`. Lines that opened no batch (repeats of stored readings) are settled at once.
// When a batch is dropped (the store failed), every connection with lines in it is closed, so that
// its client sends them again.
//
// Runs on the writer's thread only.
#pragma once

#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <string_view>

#include "stagewell/ingestor.hpp"
#include "stagewell/tcp_intake.hpp"
#include "tcp_link.hpp"

namespace stagewell::service {

class TcpConnections {
 public:
  struct Hooks {
    std::function<void()> commit_if_due;       // commit when the batch is due
    std::function<void()> commit_now;          // commit the open batch now (a client waits)
    std::function<void(const Error&)> failed;  // the store failed: drop the batch and recover
  };

  // REQUIRES: `ingestor` outlives this; its commits are observed from now on.
  TcpConnections(Ingestor& ingestor, Hooks hooks);
  ~TcpConnections();

  void connect(TcpLink link);
  void feed(std::uint64_t id, std::string_view bytes);
  void finish(std::uint64_t id);
  void disconnect(std::uint64_t id);

  // Tells every connection what is committed and that it is closed, with `reason`, and forgets
  // them all (a stop or a reload; the batch was committed or dropped just before).
  void close_all(std::string_view reason);

 private:
  struct Connection;
  void on_commit(bool committed);
  void report(Connection& connection, std::string replies, bool took_chunk);
  void store_failed(Connection& connection, std::string replies, const Error& error);
  void note_activity(Connection& connection);

  Ingestor& ingestor_;
  Hooks hooks_;
  std::map<std::uint64_t, std::unique_ptr<Connection>> connections_;
  std::map<std::string, std::int64_t, std::less<>> progress_written_ms_;  // by listener
  std::shared_ptr<bool> alive_ = std::make_shared<bool>(true);            // for the commit observer
};

}  // namespace stagewell::service
