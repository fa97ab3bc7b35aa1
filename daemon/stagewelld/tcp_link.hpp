// What passes between a tcp connection's socket, on the network loop (TcpSession), and its
// protocol, on the writer's thread (TcpConnections): the loop sends bytes, the writer answers with
// reports. A connection has at most one chunk of bytes at the writer at a time: it reads the next
// only when the report that took the last one arrives, so a writer that waits (for a database
// lock) holds the clients back through TCP instead of queueing their bytes.
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell::service {

struct TcpReport {
  std::string replies;           // protocol lines to send, in order (tcp_protocol.hpp)
  bool took_chunk = false;       // answers feed() or finish(): the connection may read again
  bool awaiting_commit = false;  // some line fed waits for a commit: the client is not idle
  bool authenticated = false;    // the `auth` line (when the source has a secret) was right
  bool refused = false;          // `replies` ends with the refusal: send it, then close
  std::int64_t lines = 0;        // lines of the connection read so far, and acknowledged (for logs)
  std::int64_t acked = 0;
  // The writer ends the connection (the store failed, the service stops or reloads): send
  // `replies`, then this line, then close.
  std::optional<std::string> closing;
};

struct TcpLink {
  std::uint64_t id = 0;  // unique within the service's run
  SourceSpec spec;       // the tcp source it came in on
  std::string peer;      // "127.0.0.1:50312"
  std::string listener;  // "tcp 127.0.0.1:7207": the source's row in ingest_progress
  // Takes a report to the connection. Called on the writer's thread; posts to the loop.
  std::function<void(TcpReport)> deliver;
};

}  // namespace stagewell::service
