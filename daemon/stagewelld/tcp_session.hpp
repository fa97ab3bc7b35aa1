// One client connection of a tcp source, on the network loop: the socket, its buffers and its
// timers. Its lines are read by the protocol on the writer's thread (tcp_connections.hpp): the
// session hands over one chunk at a time and reads the next once the writer has taken it, so a
// client can never queue more than one chunk at the writer, whatever the writer is waiting for.
//
// Memory per connection is bounded: one read buffer (kReadBufferBytes) and the replies not yet
// taken by the client (max_reply_bytes; reading stops at half of it, and the connection is closed
// beyond it).
//
// A connection is closed after `idle_timeout` with nothing moving either way — time while its
// lines wait at the writer (for a commit, or for the database's lock) does not count — and after
// `auth_timeout` without its `auth` line when the source has a secret. Closing sends the reason
// (if any), then a FIN, and discards what the client still sends for a short while, so that the
// client reads the reason instead of a reset.
//
// Lives in a shared_ptr held by its pending handlers. Runs on the service's io_context only.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <array>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>
#include <chrono>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>

#include "stagewell/config.hpp"
#include "tcp_link.hpp"

namespace stagewell::service {

class TcpListener;
class Writer;

class TcpSession : public std::enable_shared_from_this<TcpSession> {
 public:
  // Bytes read from the socket at once, and so the most one chunk for the writer holds: large
  // enough that the hand-over between the threads costs little per line (16 KiB made a bulk
  // `stagewell send` about 10 % slower), small enough for many idle connections.
  static constexpr std::size_t kReadBufferBytes = 64 * 1024;
  // Chunks a connection may have at the writer at once: with two, the next chunk is read while
  // the writer takes the last, so neither thread waits for the other; a client still cannot queue
  // more than 2 × kReadBufferBytes there.
  static constexpr int kChunksAtWriter = 2;

  TcpSession(boost::asio::ip::tcp::socket socket, std::uint64_t id, std::string peer,
             const TcpSpec& limits, std::shared_ptr<TcpListener> listener, Writer& writer);

  // Registers with the writer (`link` without its deliver, which this adds) and starts reading.
  void start(TcpLink link);
  // The service ends and the writer has said its last word: close once it is sent, giving the
  // client only a short while to read it.
  void hurry_close();

  const std::string& peer() const { return peer_; }

 private:
  using Clock = std::chrono::steady_clock;

  void on_report(TcpReport report);
  void read();
  void on_read(const boost::system::error_code& error, std::size_t bytes);
  void flush();
  void on_write(const boost::system::error_code& error);
  void close_with(std::string line);
  void begin_drain();
  void finalize();
  void arm_timer();
  void on_timer();
  std::size_t unsent_bytes() const { return pending_.size() + sending_.size(); }
  bool held_by_writer() const { return chunks_at_writer_ > 0 || awaiting_commit_; }

  boost::asio::ip::tcp::socket socket_;
  boost::asio::steady_timer timer_;
  std::uint64_t id_;
  std::string peer_;
  std::size_t max_reply_bytes_;
  Clock::duration idle_timeout_;
  std::optional<Clock::duration> auth_timeout_;  // only when the source has a secret
  std::shared_ptr<TcpListener> listener_;
  Writer& writer_;
  std::array<char, kReadBufferBytes> buffer_{};
  std::string pending_;      // replies waiting for the write in progress
  std::string sending_;      // replies being written
  std::int64_t chunks_ = 0;  // chunks handed to the writer
  bool reading_ = false;
  bool writing_ = false;
  int chunks_at_writer_ = 0;      // chunks (and the end of input) sent to the writer, not yet taken
  bool awaiting_commit_ = false;  // the writer holds lines of ours until its next commit
  bool authenticated_ = false;
  bool input_done_ = false;  // the client sent its last byte (EOF), and the writer was told
  bool closing_ = false;     // a last line is queued; then FIN, drain, close
  bool draining_ = false;    // FIN sent; discarding input until EOF or the deadline
  bool closed_ = false;
  Clock::time_point started_;
  Clock::time_point last_activity_;
  Clock::time_point close_deadline_;
};

}  // namespace stagewell::service
