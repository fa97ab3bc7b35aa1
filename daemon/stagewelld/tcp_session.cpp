#include "tcp_session.hpp"

#include <spdlog/spdlog.h>

#include <boost/asio/write.hpp>
#include <cstring>

#include "tcp_listener.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;
using boost::system::error_code;

// After the last reply of a closing connection: how long the client has to read it and close its
// side before the socket is closed regardless.
constexpr auto kCloseGrace = std::chrono::seconds(2);

std::chrono::steady_clock::duration seconds(double s) {
  return std::chrono::duration_cast<std::chrono::steady_clock::duration>(
      std::chrono::duration<double>(s));
}

}  // namespace

TcpSession::TcpSession(asio::ip::tcp::socket socket, std::string peer, const TcpSpec& limits,
                       std::shared_ptr<TcpListener> listener, TcpIntake intake)
    : socket_(std::move(socket)),
      timer_(socket_.get_executor()),
      peer_(std::move(peer)),
      max_reply_bytes_(limits.max_reply_bytes),
      idle_timeout_(seconds(limits.idle_timeout_s)),
      listener_(std::move(listener)),
      intake_(std::move(intake)) {
  if (limits.secret) auth_timeout_ = seconds(limits.auth_timeout_s);
}

void TcpSession::start() {
  error_code ignored;
  socket_.set_option(asio::ip::tcp::no_delay(true), ignored);  // an ack is one small write: now
  socket_.set_option(asio::socket_base::keep_alive(true), ignored);  // notice a vanished peer
  started_ = last_activity_ = Clock::now();
  spdlog::debug("{}: connected", peer_);
  arm_timer();
  read();
}

// ---- input -------------------------------------------------------------------------------------

void TcpSession::read() {
  if (reading_ || closed_) return;
  if (!draining_ && (closing_ || stopping_ || waiting_ || input_done_ || begin_ < end_)) return;
  reading_ = true;
  begin_ = end_ = 0;
  socket_.async_read_some(asio::buffer(buffer_),
                          [self = shared_from_this()](const error_code& error, std::size_t bytes) {
                            self->on_read(error, bytes);
                          });
}

void TcpSession::on_read(const error_code& error, std::size_t bytes) {
  reading_ = false;
  if (closed_) return;
  if (draining_) {
    // Discarding what the client still sends; its EOF (or an error) ends the connection.
    if (error) {
      finalize();
    } else {
      read();
    }
    return;
  }
  if (error == asio::error::eof) {
    input_done_ = true;  // the client has sent everything; it may still wait for its acks
    last_activity_ = Clock::now();
    process();
    return;
  }
  if (error) {
    if (error == asio::error::operation_aborted) return;
    // Reset or unreachable: the client is gone. Lines it sent stay in the batch (a resend of them
    // is a repeat of a stored reading).
    spdlog::info("{}: connection lost after {} lines ({} acknowledged): {}", peer_, intake_.lines(),
                 intake_.acked(), error.message());
    finalize();
    return;
  }
  last_activity_ = Clock::now();
  end_ = bytes;
  process();
}

// Feeds the buffered bytes line by line, stopping whenever the listener holds connections back
// or this client has too many replies unread. Each stop is resumed: by resume(), or by on_write().
void TcpSession::process() {
  if (closed_ || closing_ || draining_ || stopping_ || waiting_) return;
  bool fed = false;
  while (begin_ < end_ || (input_done_ && !finished_)) {
    if (listener_->holding_back()) {
      waiting_ = true;
      listener_->wait(shared_from_this());
      break;
    }
    if (unsent_bytes() >= max_reply_bytes_ / 2) break;
    Result<void> status;
    if (begin_ < end_) {
      // One line at a time, so that the replies one read can cause are bounded by the check above.
      const char* start = buffer_.data() + begin_;
      const auto* newline = static_cast<const char*>(std::memchr(start, '\n', end_ - begin_));
      const std::size_t length =
          newline ? static_cast<std::size_t>(newline - start) + 1 : end_ - begin_;
      status = intake_.feed({start, length}, pending_);
      begin_ += length;
    } else {
      status = intake_.finish(pending_);
      finished_ = true;
    }
    fed = true;
    if (!status) {
      listener_->store_failed(status.error());
      close_with(reply::store_failed());
      return;
    }
    if (intake_.refusal()) {
      spdlog::warn("{}: refused: {}", peer_, *intake_.refusal());
      close_with("");  // the refusal is in pending_ already
      return;
    }
  }
  if (fed) listener_->fed(intake_.awaiting_commit());
  intake_.report_ack(pending_);
  flush();
  if (finished_) {
    if (fed && intake_.awaiting_commit()) listener_->commit_soon();  // it waits only for that
    close_if_done();
  } else {
    read();
  }
}

void TcpSession::resume() {
  waiting_ = false;
  last_activity_ = Clock::now();  // held back by the service, not idle
  process();
}

// ---- commits -----------------------------------------------------------------------------------

void TcpSession::on_commit(bool committed) {
  if (closed_ || closing_ || draining_) return;
  if (committed) {
    intake_.committed();
    intake_.report_ack(pending_);
    if (unsent_bytes() > max_reply_bytes_) {
      // It does not read what it is sent; nothing more can be said to it.
      spdlog::warn("{}: closed: more than {} bytes of replies left unread", peer_,
                   max_reply_bytes_);
      finalize();
      return;
    }
    flush();
    close_if_done();
  } else if (intake_.awaiting_commit()) {
    spdlog::warn(
        "{}: lines {} to {} were not stored (the batch was dropped); closing so that the "
        "client sends them again",
        peer_, intake_.acked() + 1, intake_.lines());
    intake_.batch_dropped(pending_);  // the last `ok` and the closing line
    close_with("");
  }
}

// Once every line fed is acknowledged: a client that has sent its last byte is done; at a stop,
// the client is told why.
void TcpSession::close_if_done() {
  if (closing_ || closed_ || intake_.awaiting_commit()) return;
  if (finished_) {
    intake_.report_ack(pending_);
    close_with("");
  } else if (stopping_) {
    intake_.report_ack(pending_);
    close_with(reply::closing("the service is stopping; send again any lines after your last ok"));
  }
}

void TcpSession::stop() {
  stopping_ = true;
  close_if_done();  // otherwise on_commit() closes, after the final commit
}

void TcpSession::detach(std::string_view reason) {
  stopping_ = true;
  if (closed_ || closing_) return;
  intake_.report_ack(pending_);
  close_with(reply::closing(reason));
}

// ---- output and closing ------------------------------------------------------------------------

void TcpSession::flush() {
  if (writing_ || pending_.empty() || closed_ || draining_) return;
  sending_.swap(pending_);
  pending_.clear();
  writing_ = true;
  asio::async_write(
      socket_, asio::buffer(sending_),
      [self = shared_from_this()](const error_code& error, std::size_t) { self->on_write(error); });
}

void TcpSession::on_write(const error_code& error) {
  writing_ = false;
  sending_.clear();
  if (closed_) return;
  if (error) {
    if (error != asio::error::operation_aborted) finalize();  // the client is gone
    return;
  }
  last_activity_ = Clock::now();
  if (!pending_.empty()) {
    flush();
  } else if (closing_) {
    begin_drain();
  } else {
    process();  // it may have stopped for unread replies
  }
}

void TcpSession::close_with(std::string line) {
  if (closing_ || closed_) return;
  closing_ = true;
  pending_ += line;
  close_deadline_ = Clock::now() + kCloseGrace;
  arm_timer();
  if (writing_ || !pending_.empty()) {
    flush();
  } else {
    begin_drain();
  }
}

// Everything is said: send FIN and read until the client closes too, so that it reads the last
// reply rather than a reset (closing with unread input would send one).
void TcpSession::begin_drain() {
  if (draining_ || closed_) return;
  draining_ = true;
  error_code ignored;
  socket_.shutdown(asio::ip::tcp::socket::shutdown_send, ignored);
  read();
}

void TcpSession::finalize() {
  if (closed_) return;
  closed_ = true;
  error_code ignored;
  socket_.close(ignored);  // handlers in flight complete with operation_aborted
  timer_.cancel();
  listener_->remove(this);
  spdlog::debug("{}: closed after {} lines, {} acknowledged", peer_, intake_.lines(),
                intake_.acked());
}

// ---- timeouts ----------------------------------------------------------------------------------

void TcpSession::arm_timer() {
  if (closed_) return;
  Clock::time_point deadline = last_activity_ + idle_timeout_;
  if (closing_ || draining_) {
    deadline = close_deadline_;
  } else if (auth_timeout_ && !intake_.authenticated()) {
    deadline = std::min(deadline, started_ + *auth_timeout_);
  }
  timer_.expires_at(deadline);  // cancels the wait in progress, if any
  timer_.async_wait([self = shared_from_this()](const error_code& error) {
    if (!error) self->on_timer();
  });
}

void TcpSession::on_timer() {
  if (closed_) return;
  const auto now = Clock::now();
  if (closing_ || draining_) {
    if (now >= close_deadline_) {
      finalize();
    } else {
      arm_timer();
    }
    return;
  }
  if (auth_timeout_ && !intake_.authenticated() && now >= started_ + *auth_timeout_) {
    spdlog::warn("{}: refused: no auth line in time", peer_);
    close_with(reply::refused("auth", "no auth line in time"));
    return;
  }
  if (now >= last_activity_ + idle_timeout_) {
    spdlog::info("{}: closed: idle", peer_);
    close_with(reply::closing("idle too long; send again any lines after your last ok"));
    return;
  }
  arm_timer();
}

}  // namespace stagewell::service
