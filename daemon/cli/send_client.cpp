#include "send_client.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <boost/asio/connect.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/read_until.hpp>
#include <boost/asio/write.hpp>
#include <charconv>
#include <iostream>
#include <mutex>

#include "command.hpp"

namespace stagewell::cli::send {
namespace {

namespace asio = boost::asio;
using asio::ip::tcp;
using boost::system::error_code;
using Clock = std::chrono::steady_clock;

constexpr std::size_t kWindowLines = 100'000;    // unacknowledged lines kept for resending
constexpr std::size_t kWindowBytes = 16 << 20;   // ... and their bytes
constexpr std::size_t kWriteBytes = 256 * 1024;  // bytes per write
constexpr auto kConnectTimeout = std::chrono::seconds(10);
constexpr auto kFirstPause = std::chrono::milliseconds(250);
constexpr auto kLongestPause = std::chrono::seconds(8);
constexpr int kRejectsShown = 20;  // rejected lines printed one by one; the rest are counted

}  // namespace

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

}  // namespace stagewell::cli::send
