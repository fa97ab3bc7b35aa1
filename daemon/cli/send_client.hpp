// `stagewell send`: streams readings to a `type: tcp` source and waits until each is stored.
//
// Lines go out as they are read (a file or stdin); the service acknowledges them in order (`ok n`,
// stagewell/tcp_intake.hpp). Unacknowledged lines are kept (at most kWindowLines) and, after a
// disconnect, sent again on a new connection from the first unacknowledged one — harmless, since a
// repeat of a stored reading is a no-op. The first non-comment line is also sent again first, in
// case it was the header. Reconnection waits 0.25 s, 0.5 s, 1 s, ... up to 8 s, and gives up after
// `--tries` attempts in a row that acknowledged nothing.
//
// One thread reads the input into a bounded queue (send_input.hpp); the Asio loop does all the
// networking, here.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/asio/streambuf.hpp>
#include <chrono>
#include <cstdint>
#include <deque>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include "send_input.hpp"

namespace stagewell::cli::send {

struct SendOptions {
  std::string host = "127.0.0.1";
  int port = 7207;
  std::string token_file;
  std::string input;
  int tries = 8;
  double ack_timeout_s = 30.0;
  bool quiet = false;
};

class Sender {
 public:
  Sender(boost::asio::io_context& io, const SendOptions& options, std::optional<std::string> token,
         std::shared_ptr<Inbox> inbox)
      : io_(io),
        options_(options),
        token_(std::move(token)),
        inbox_(std::move(inbox)),
        resolver_(io),
        retry_(io),
        watchdog_(io) {}

  void start() {
    watch();
    connect();
  }
  void on_input() { take_input(); }
  int finish_report();

 private:
  struct Connection {
    explicit Connection(boost::asio::io_context& io) : socket(io) {}
    boost::asio::ip::tcp::socket socket;
    boost::asio::streambuf replies{64 * 1024};
    std::string out;
    bool writing = false;
    bool connected = false;
    bool half_closed = false;       // everything sent: FIN
    std::int64_t header_lines = 0;  // 1 when the header was sent again first
    std::int64_t first_input = 0;   // the input line sent after it
    std::chrono::steady_clock::time_point started = std::chrono::steady_clock::now();
  };

  // The input line that a line number of the connection stands for; 0 for the resent header.
  std::int64_t input_line(const Connection& c, std::int64_t n) const {
    return n <= c.header_lines ? 0 : c.first_input + (n - c.header_lines - 1);
  }
  bool done() const { return input_eof_ && window_.empty(); }

  void take_input();
  void connect();
  void on_connected(const std::shared_ptr<Connection>& c);
  void pump();
  void read_reply(const std::shared_ptr<Connection>& c);
  void on_reply(const std::shared_ptr<Connection>& c, std::string_view line);
  void drop(const std::string& why, bool failure);
  void watch();
  void stop_everything();

  boost::asio::io_context& io_;
  SendOptions options_;
  std::optional<std::string> token_;
  std::shared_ptr<Inbox> inbox_;
  boost::asio::ip::tcp::resolver resolver_;
  boost::asio::steady_timer retry_;
  boost::asio::steady_timer watchdog_;
  std::shared_ptr<Connection> connection_;
  bool retry_pending_ = false;

  std::deque<std::string> window_;  // input lines first_unacked_, first_unacked_ + 1, ...
  std::size_t window_bytes_ = 0;
  std::int64_t first_unacked_ = 1;
  std::int64_t next_to_send_ = 1;
  std::int64_t lines_read_ = 0;
  bool input_eof_ = false;
  std::string input_error_;
  std::optional<std::int64_t> header_line_;  // the first line that is not blank or a comment
  std::string header_text_;
  std::int64_t skipped_ = 0;                     // blank and comment lines
  std::map<std::int64_t, std::string> rejects_;  // input line -> "kind reason"
  std::map<std::string, std::int64_t> rejects_by_kind_;
  int failures_ = 0;  // attempts in a row that acknowledged nothing
  bool gave_up_ = false;
  std::string fatal_;  // refused: no point trying again
  std::chrono::steady_clock::time_point last_progress_ = std::chrono::steady_clock::now();
};

}  // namespace stagewell::cli::send
