// `stagewell send`: streams readings to a `type: tcp` source and waits until each is stored.
//
// Lines go out as they are read (a file or stdin); the service acknowledges them in order (`ok n`,
// tcp_intake.hpp). Unacknowledged lines are kept (at most kWindowLines) and, after a disconnect,
// sent again on a new connection from the first unacknowledged one — harmless, since a repeat of a
// stored reading is a no-op. The first non-comment line is also sent again first, in case it was
// the header. Reconnection waits 0.25 s, 0.5 s, 1 s, ... up to 8 s, and gives up after `--tries`
// attempts in a row that acknowledged nothing.
//
// One thread reads the input into a bounded queue; the Asio loop does all the networking.
// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <fcntl.h>
#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <boost/asio/connect.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/read_until.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/asio/streambuf.hpp>
#include <boost/asio/write.hpp>
#include <cerrno>
#include <charconv>
#include <chrono>
#include <condition_variable>
#include <cstring>
#include <deque>
#include <fstream>
#include <functional>
#include <iostream>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "commands.hpp"

namespace stagewell::cli {
namespace {

namespace asio = boost::asio;
using asio::ip::tcp;
using boost::system::error_code;
using Clock = std::chrono::steady_clock;

constexpr std::size_t kWindowLines = 100'000;    // unacknowledged lines kept for resending
constexpr std::size_t kWindowBytes = 16 << 20;   // ... and their bytes
constexpr std::size_t kInboxBytes = 16 << 20;    // bytes read ahead of the window
constexpr std::size_t kLongestLine = 1 << 20;    // bytes kept of a line; the service refuses more
constexpr std::size_t kWriteBytes = 256 * 1024;  // bytes per write
constexpr auto kConnectTimeout = std::chrono::seconds(10);
constexpr auto kFirstPause = std::chrono::milliseconds(250);
constexpr auto kLongestPause = std::chrono::seconds(8);
constexpr int kRejectsShown = 20;  // rejected lines printed one by one; the rest are counted

struct SendOptions {
  std::string host = "127.0.0.1";
  int port = 7207;
  std::string token_file;
  std::string input;
  int tries = 8;
  double ack_timeout_s = 30.0;
  bool quiet = false;
};

// Lines read by the input thread, waiting for the loop. Bounded: the reader waits when full.
struct Inbox {
  std::mutex mutex;
  std::condition_variable space;
  std::deque<std::string> lines;
  std::size_t bytes = 0;  // of `lines`
  bool eof = false;
  std::string error;       // why reading stopped early
  bool abandoned = false;  // the loop has given up: stop reading
};

// The input thread: lines of `fd` into the inbox, each arrival announced to the loop by `notify`.
void read_input(int fd, const std::shared_ptr<Inbox>& inbox, asio::io_context& io,
                const std::function<void()>& notify) {
  std::string buffer(64 * 1024, '\0');
  std::string line;
  // Beyond kLongestLine a line is sent cut: the service rejects it as too long all the same.
  const auto append = [&line](std::string_view text) {
    line.append(text.substr(0, kLongestLine - std::min(line.size(), kLongestLine)));
  };
  for (bool end = false; !end;) {
    const ssize_t n = ::read(fd, buffer.data(), buffer.size());
    if (n < 0 && errno == EINTR) continue;
    end = n <= 0;
    std::vector<std::string> complete;
    std::string_view rest(buffer.data(), end ? 0 : static_cast<std::size_t>(n));
    for (auto newline = rest.find('\n'); newline != std::string_view::npos;
         newline = rest.find('\n')) {
      append(rest.substr(0, newline));
      if (!line.empty() && line.back() == '\r') line.pop_back();
      complete.push_back(std::exchange(line, {}));
      rest.remove_prefix(newline + 1);
    }
    append(rest);
    if (end && !line.empty()) complete.push_back(std::move(line));
    std::unique_lock lock(inbox->mutex);
    for (auto& text : complete) {
      inbox->space.wait(lock, [&] { return inbox->bytes < kInboxBytes || inbox->abandoned; });
      if (inbox->abandoned) return;
      inbox->bytes += text.size() + 1;
      inbox->lines.push_back(std::move(text));
    }
    if (end) {
      inbox->eof = true;
      inbox->error = n < 0 ? std::strerror(errno) : "";
    }
    if (inbox->abandoned) return;
    lock.unlock();
    asio::post(io, notify);
  }
}

class Sender {
 public:
  Sender(asio::io_context& io, const SendOptions& options, std::optional<std::string> token,
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
    explicit Connection(asio::io_context& io) : socket(io) {}
    tcp::socket socket;
    asio::streambuf replies{64 * 1024};
    std::string out;
    bool writing = false;
    bool connected = false;
    bool half_closed = false;       // everything sent: FIN
    std::int64_t header_lines = 0;  // 1 when the header was sent again first
    std::int64_t first_input = 0;   // the input line sent after it
    Clock::time_point started = Clock::now();
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

  asio::io_context& io_;
  SendOptions options_;
  std::optional<std::string> token_;
  std::shared_ptr<Inbox> inbox_;
  tcp::resolver resolver_;
  asio::steady_timer retry_;
  asio::steady_timer watchdog_;
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
  Clock::time_point last_progress_ = Clock::now();
};

void Sender::take_input() {
  {
    std::lock_guard lock(inbox_->mutex);
    while (!inbox_->lines.empty() && window_.size() < kWindowLines &&
           window_bytes_ < kWindowBytes) {
      std::string text = std::move(inbox_->lines.front());
      inbox_->lines.pop_front();
      inbox_->bytes -= text.size() + 1;
      window_bytes_ += text.size() + 1;
      ++lines_read_;
      std::string_view content = text;
      if (lines_read_ == 1 && content.starts_with("\xEF\xBB\xBF")) content.remove_prefix(3);
      while (!content.empty() && (content.front() == ' ' || content.front() == '\t'))
        content.remove_prefix(1);
      if (content.empty() || content.front() == '#') {
        ++skipped_;
      } else if (!header_line_) {
        header_line_ = lines_read_;
        header_text_ = text;
      }
      window_.push_back(std::move(text));
    }
    if (inbox_->lines.empty() && inbox_->eof) {
      input_eof_ = true;
      input_error_ = inbox_->error;
    }
  }
  inbox_->space.notify_one();
  if (done()) return stop_everything();
  if (!connection_ && !retry_pending_ && !gave_up_ && fatal_.empty()) connect();
  pump();
}

void Sender::connect() {
  if (gave_up_ || !fatal_.empty() || done()) return;
  auto c = std::make_shared<Connection>(io_);
  connection_ = c;
  resolver_.async_resolve(
      options_.host, std::to_string(options_.port),
      [this, c](const error_code& error, const tcp::resolver::results_type& endpoints) {
        if (c != connection_) return;
        if (error) return drop("cannot resolve " + options_.host + ": " + error.message(), true);
        asio::async_connect(c->socket, endpoints,
                            [this, c](const error_code& e, const tcp::endpoint&) {
                              if (c != connection_) return;
                              if (e) return drop("cannot connect: " + e.message(), true);
                              on_connected(c);
                            });
      });
}

void Sender::on_connected(const std::shared_ptr<Connection>& c) {
  c->connected = true;
  error_code ignored;
  c->socket.set_option(tcp::no_delay(true), ignored);
  if (token_) c->out = "auth " + *token_ + "\n";
  // Every connection starts with the header, if the input has one: the first unacknowledged line
  // may come after it. A data line sent twice is a repeat, which is harmless.
  if (header_line_ && *header_line_ < first_unacked_ && !rejects_.contains(*header_line_)) {
    c->out += header_text_ + "\n";
    c->header_lines = 1;
  }
  c->first_input = first_unacked_;
  next_to_send_ = first_unacked_;
  last_progress_ = Clock::now();
  read_reply(c);
  pump();
}

void Sender::pump() {
  const auto c = connection_;
  if (!c || !c->connected || c->writing) return;
  const std::int64_t end = first_unacked_ + static_cast<std::int64_t>(window_.size());
  while (next_to_send_ < end && c->out.size() < kWriteBytes) {
    c->out += window_[static_cast<std::size_t>(next_to_send_ - first_unacked_)];
    c->out += '\n';
    ++next_to_send_;
  }
  if (c->out.empty()) {
    if (input_eof_ && next_to_send_ == end && !c->half_closed) {
      // Everything is sent: say so, and the service commits at once instead of when the batch
      // is due, then acknowledges and closes.
      c->half_closed = true;
      error_code ignored;
      c->socket.shutdown(tcp::socket::shutdown_send, ignored);
    }
    return;
  }
  c->writing = true;
  asio::async_write(c->socket, asio::buffer(c->out),
                    [this, c](const error_code& error, std::size_t) {
                      c->writing = false;
                      c->out.clear();
                      if (c != connection_) return;
                      if (error)
                        return drop("connection lost while sending: " + error.message(), false);
                      pump();
                    });
}

void Sender::read_reply(const std::shared_ptr<Connection>& c) {
  asio::async_read_until(
      c->socket, c->replies, '\n', [this, c](const error_code& error, std::size_t n) {
        if (c != connection_) return;
        if (error) {
          return drop(error == asio::error::eof ? "the service closed the connection"
                                                : "connection lost: " + error.message(),
                      false);
        }
        std::string line(
            asio::buffers_begin(c->replies.data()),
            asio::buffers_begin(c->replies.data()) + static_cast<std::ptrdiff_t>(n - 1));
        c->replies.consume(n);
        if (!line.empty() && line.back() == '\r') line.pop_back();
        on_reply(c, line);
        if (c == connection_) read_reply(c);
      });
}

void Sender::on_reply(const std::shared_ptr<Connection>& c, std::string_view line) {
  const auto word_end = line.find(' ');
  const std::string_view word = line.substr(0, word_end);
  const std::string_view rest = word_end == std::string_view::npos ? "" : line.substr(word_end + 1);
  std::int64_t n = 0;
  const auto [after, ec] = std::from_chars(rest.data(), rest.data() + rest.size(), n);
  if (word == "ok" && ec == std::errc()) {
    const std::int64_t stored_through = input_line(*c, n);
    if (stored_through >= first_unacked_) {
      const auto count = std::min<std::int64_t>(stored_through - first_unacked_ + 1,
                                                static_cast<std::int64_t>(window_.size()));
      for (std::int64_t i = 0; i < count; ++i) window_bytes_ -= window_[i].size() + 1;
      window_.erase(window_.begin(), window_.begin() + count);
      first_unacked_ += count;
      failures_ = 0;
      last_progress_ = Clock::now();
      take_input();
    }
  } else if (word == "error" && ec == std::errc()) {
    const std::int64_t at = input_line(*c, n);
    std::string_view what = std::string_view(after, rest.data() + rest.size());
    if (!what.empty() && what.front() == ' ') what.remove_prefix(1);
    if (at > 0 && rejects_.emplace(at, std::string(what)).second) {
      ++rejects_by_kind_[std::string(what.substr(0, what.find(' ')))];
      if (!options_.quiet && rejects_.size() <= kRejectsShown) {
        std::cerr << fmt::format("line {}: rejected: {}\n", at, what);
      }
    }
  } else if (word == "refused") {
    if (rest.starts_with("busy")) return drop(fmt::format("refused: {}", rest), true);
    fatal_ = fmt::format("refused: {}", rest);
    return drop(fatal_, true);
  } else if (word == "closing") {
    if (!options_.quiet) std::cerr << fmt::format("the service is closing: {}\n", rest);
  }
}

// The connection is over. A `failure` (nothing acknowledged on it) counts towards --tries.
void Sender::drop(const std::string& why, bool failure) {
  if (connection_) {
    error_code ignored;
    connection_->socket.close(ignored);
    connection_.reset();
  }
  if (done()) return stop_everything();
  if (!fatal_.empty()) {
    std::cerr << "stagewell send: " << fatal_ << '\n';
    return stop_everything();
  }
  const bool waiting = next_to_send_ > first_unacked_;  // lines sent and not acknowledged
  if (failure || waiting) ++failures_;
  if (failures_ > options_.tries) {
    std::cerr << fmt::format("stagewell send: giving up after {} attempts: {}\n", failures_ - 1,
                             why);
    gave_up_ = true;
    return stop_everything();
  }
  if (failures_ == 0 && window_.empty()) return;  // reconnect when there is something to send
  const auto pause =
      std::min<Clock::duration>(kFirstPause * (1 << std::min(failures_, 8) >> 1), kLongestPause);
  if (!options_.quiet) {
    std::cerr << fmt::format("stagewell send: {}; trying again in {:.2f} s\n", why,
                             std::chrono::duration<double>(pause).count());
  }
  retry_pending_ = true;
  retry_.expires_after(pause);
  retry_.async_wait([this](const error_code& error) {
    retry_pending_ = false;
    if (!error) connect();
  });
}

// Once a second: a connection attempt or an acknowledgement that takes too long is a failure.
void Sender::watch() {
  watchdog_.expires_after(std::chrono::seconds(1));
  watchdog_.async_wait([this](const error_code& error) {
    if (error) return;
    const auto now = Clock::now();
    const auto c = connection_;
    if (c && !c->connected && now - c->started > kConnectTimeout) {
      drop("no connection within 10 s", true);
    } else if (c && c->connected && next_to_send_ > first_unacked_ &&
               now - last_progress_ > std::chrono::duration<double>(options_.ack_timeout_s)) {
      drop(fmt::format("no acknowledgement for {} s", options_.ack_timeout_s), true);
    }
    if (!gave_up_ && fatal_.empty() && !done()) watch();
  });
}

void Sender::stop_everything() {
  if (connection_) {
    error_code ignored;
    connection_->socket.shutdown(tcp::socket::shutdown_both, ignored);
    connection_->socket.close(ignored);
    connection_.reset();
  }
  resolver_.cancel();
  retry_.cancel();
  watchdog_.cancel();
  std::lock_guard lock(inbox_->mutex);
  inbox_->abandoned = true;
  inbox_->space.notify_all();
}

int Sender::finish_report() {
  const std::int64_t acked = first_unacked_ - 1;
  const auto rejected = static_cast<std::int64_t>(rejects_.size());
  // A line of names (no digit: no reading has none) was the header.
  const auto is_digit = [](char ch) { return ch >= '0' && ch <= '9'; };
  const std::int64_t header = header_line_ && *header_line_ <= acked &&
                              !rejects_.contains(*header_line_) &&
                              std::none_of(header_text_.begin(), header_text_.end(), is_digit);
  const bool complete = input_eof_ && window_.empty() && input_error_.empty();
  std::cout << fmt::format("{} lines read, {} acknowledged as stored{}\n", lines_read_, acked,
                           complete ? " (all)" : "");
  std::cout << fmt::format("  readings stored (new or already there)  {}\n",
                           acked - rejected - skipped_ - header);
  std::cout << fmt::format("  lines rejected (kept in rejects)        {}\n", rejected);
  for (const auto& [kind, count] : rejects_by_kind_) {
    std::cout << fmt::format("    {:<36}{}\n", kind, count);
  }
  std::cout << fmt::format("  header, blank and comment lines          {}\n", skipped_ + header);
  if (!input_error_.empty())
    std::cerr << "stagewell send: reading the input: " << input_error_ << '\n';
  if (!complete) {
    std::cerr << fmt::format(
        "stagewell send: lines from {} on were not acknowledged; send them again\n", acked + 1);
    return kInvalidInput;
  }
  return kOk;
}

// The secret in `path`, without surrounding white space; empty when unreadable.
std::string read_token(const std::string& path) {
  std::ifstream file(path, std::ios::binary);
  const std::string text((std::istreambuf_iterator<char>(file)), std::istreambuf_iterator<char>());
  const auto first = text.find_first_not_of(" \t\r\n");
  if (first == std::string::npos) return "";
  return text.substr(first, text.find_last_not_of(" \t\r\n") - first + 1);
}

int run_send(const SendOptions& options) {
  std::optional<std::string> token;
  if (!options.token_file.empty()) {
    token = read_token(options.token_file);
    if (token->empty()) {
      std::cerr << "stagewell send: cannot read a secret from " << options.token_file << '\n';
      return kInvalidInput;
    }
  }
  int fd = STDIN_FILENO;
  if (options.input != "-") {
    fd = ::open(options.input.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      std::cerr << "stagewell send: cannot open " << options.input << ": " << std::strerror(errno)
                << '\n';
      return kInvalidInput;
    }
  }
  asio::io_context io;
  auto inbox = std::make_shared<Inbox>();
  Sender sender(io, options, token, inbox);
  // The thread owns the descriptor it reads; `io` outlives it unless we give up first (then the
  // process ends right after, and a thread blocked reading stdin must not hold it open).
  std::thread reader([fd, inbox, &io, &sender] {
    read_input(fd, inbox, io, [&sender] { sender.on_input(); });
    if (fd != STDIN_FILENO) ::close(fd);
  });
  sender.start();
  io.run();
  const int code = sender.finish_report();
  {
    std::lock_guard lock(inbox->mutex);
    if (!inbox->eof) {
      reader.detach();  // blocked on input we no longer want
      return code;
    }
  }
  reader.join();
  return code;
}

}  // namespace

void add_send_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "send", "Send readings to a stagewelld tcp source and wait until each is stored");
  auto options = std::make_shared<SendOptions>();
  command->add_option("input", options->input, "CSV readings: a file, or - for standard input")
      ->required();
  command->add_option("--host", options->host, "The service's address or name")
      ->capture_default_str();
  command->add_option("--port", options->port, "The tcp source's port")
      ->check(CLI::Range(1, 65535))
      ->capture_default_str();
  command->add_option("--token-file", options->token_file,
                      "File holding the source's shared secret (sent first as `auth <secret>`)");
  command
      ->add_option("--tries", options->tries,
                   "Attempts in a row that get nothing acknowledged before giving up")
      ->check(CLI::Range(0, 100))
      ->capture_default_str();
  command
      ->add_option("--ack-timeout", options->ack_timeout_s,
                   "Seconds without an acknowledgement before reconnecting")
      ->check(CLI::Range(1.0, 3600.0))
      ->capture_default_str();
  command->add_flag("-q,--quiet", options->quiet, "Print only the summary");
  command->footer(
      "After a disconnect it reconnects (pauses 0.25 s, 0.5 s, 1 s ... up to 8 s) and sends again "
      "every line after the last acknowledged one. Exit status: 0 when every line is "
      "acknowledged (rejected lines included: they are listed), 1 when some are not (refused, "
      "gave up, unreadable input), 2 on usage errors.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_send(*options); }; });
}

}  // namespace stagewell::cli
