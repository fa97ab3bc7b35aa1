// One client connection of a tcp source: the socket, its buffers and its timers around a
// TcpIntake (the protocol, in lib: stagewell/tcp_intake.hpp).
//
// Memory per connection is bounded: one read buffer (kReadBufferBytes), one unfinished line
// (max_line_bytes) and the replies not yet taken by the client (max_reply_bytes; reading stops at
// half of it, and the connection is closed beyond it). Reading also stops while the listener
// holds all connections back (a commit is due, or the store failed), so that a lagging store
// pushes back on the clients through TCP instead of growing the batch.
//
// A connection is closed after `idle_timeout` with nothing moving either way, and after
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

#include "stagewell/tcp_intake.hpp"

namespace stagewell::service {

class TcpListener;

class TcpSession : public std::enable_shared_from_this<TcpSession> {
 public:
  static constexpr std::size_t kReadBufferBytes = 16 * 1024;

  TcpSession(boost::asio::ip::tcp::socket socket, std::string peer, const TcpSpec& limits,
             std::shared_ptr<TcpListener> listener, TcpIntake intake);

  void start();

  // After every commit attempt (Ingestor::add_commit_observer).
  void on_commit(bool committed);
  // The listener lets connections read again.
  void resume();
  // The service stops: read nothing more; close once every line fed is acknowledged.
  void stop();
  // The Ingestor is going away: close now, whatever is unacknowledged (the client resends it).
  void detach(std::string_view reason);

  const std::string& peer() const { return peer_; }

 private:
  using Clock = std::chrono::steady_clock;

  void process();
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
  void close_if_done();

  boost::asio::ip::tcp::socket socket_;
  boost::asio::steady_timer timer_;
  std::string peer_;
  std::size_t max_reply_bytes_;
  Clock::duration idle_timeout_;
  std::optional<Clock::duration> auth_timeout_;  // only when the source has a secret
  std::shared_ptr<TcpListener> listener_;
  TcpIntake intake_;
  std::array<char, kReadBufferBytes> buffer_{};
  std::size_t begin_ = 0;  // bytes of buffer_ [begin_, end_) are read but not yet fed
  std::size_t end_ = 0;
  std::string pending_;  // replies waiting for the write in progress
  std::string sending_;  // replies being written
  bool reading_ = false;
  bool writing_ = false;
  bool input_done_ = false;  // the client sent its last byte (EOF)
  bool finished_ = false;    // ... and the intake has processed its last line
  bool waiting_ = false;     // held back by the listener until resume()
  bool stopping_ = false;    // the service stops: feed nothing more
  bool closing_ = false;     // a last line is queued; then FIN, drain, close
  bool draining_ = false;    // FIN sent; discarding input until EOF or the deadline
  bool closed_ = false;
  Clock::time_point started_;
  Clock::time_point last_activity_;
  Clock::time_point close_deadline_;
};

}  // namespace stagewell::service
