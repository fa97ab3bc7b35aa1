#include "tcp_session.hpp"

#include <spdlog/spdlog.h>

#include <boost/asio/post.hpp>
#include <boost/asio/write.hpp>

#include "stagewell/tcp_intake.hpp"
#include "tcp_listener.hpp"
#include "writer.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;
using boost::system::error_code;

// After the last reply of a closing connection: how long the client has to read it and close its
// side before the socket is closed regardless.
constexpr auto kCloseGrace = std::chrono::seconds(2);
// The same at the service's end, so that a client that never closes cannot delay the exit.
constexpr auto kHurriedGrace = std::chrono::milliseconds(300);

std::chrono::steady_clock::duration seconds(double s) {
  return std::chrono::duration_cast<std::chrono::steady_clock::duration>(
      std::chrono::duration<double>(s));
}

}  // namespace

TcpSession::TcpSession(asio::ip::tcp::socket socket, std::uint64_t id, std::string peer,
                       const TcpSpec& limits, std::shared_ptr<TcpListener> listener, Writer& writer)
    : socket_(std::move(socket)),
      timer_(socket_.get_executor()),
      id_(id),
      peer_(std::move(peer)),
      max_reply_bytes_(limits.max_reply_bytes),
      idle_timeout_(seconds(limits.idle_timeout_s)),
      listener_(std::move(listener)),
      writer_(writer) {
  if (limits.secret) auth_timeout_ = seconds(limits.auth_timeout_s);
}

void TcpSession::start(TcpLink link) {
  error_code ignored;
  socket_.set_option(asio::ip::tcp::no_delay(true), ignored);  // an ack is one small write: now
  socket_.set_option(asio::socket_base::keep_alive(true), ignored);  // notice a vanished peer
  started_ = last_activity_ = Clock::now();
  // Reports come from the writer's thread: each is posted to this connection's loop.
  link.deliver = [weak = weak_from_this(), executor = socket_.get_executor()](TcpReport report) {
    asio::post(executor, [weak, report = std::move(report)]() mutable {
      if (auto self = weak.lock()) self->on_report(std::move(report));
    });
  };
  writer_.connect(std::move(link));
  spdlog::debug("{}: connected", peer_);
  arm_timer();
  read();
}

// ---- input -------------------------------------------------------------------------------------

void TcpSession::read() {
  if (reading_ || closed_) return;
  if (!draining_ && (closing_ || chunks_at_writer_ >= kChunksAtWriter || input_done_ ||
                     unsent_bytes() >= max_reply_bytes_ / 2)) {
    return;
  }
  reading_ = true;
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
    // The client has sent everything; it may still wait for its acknowledgements.
    input_done_ = true;
    ++chunks_at_writer_;
    last_activity_ = Clock::now();
    writer_.finish(id_);
    return;
  }
  if (error) {
    if (error == asio::error::operation_aborted) return;
    // Reset or unreachable: the client is gone. Lines it sent stay in the batch (a resend of them
    // is a repeat of a stored reading).
    spdlog::info("{}: connection lost after {} chunks: {}", peer_, chunks_, error.message());
    finalize();
    return;
  }
  last_activity_ = Clock::now();
  ++chunks_at_writer_;
  ++chunks_;
  writer_.feed(id_, std::string(buffer_.data(), bytes));
}

// ---- what the writer says ----------------------------------------------------------------------

void TcpSession::on_report(TcpReport report) {
  if (closed_) return;
  pending_ += report.replies;
  if (report.took_chunk && chunks_at_writer_ > 0) --chunks_at_writer_;
  awaiting_commit_ = report.awaiting_commit;
  authenticated_ = report.authenticated;
  last_activity_ = Clock::now();  // held back by the service, not idle
  if (report.refused) {
    spdlog::warn("{}: refused: {}", peer_, report.replies.substr(0, report.replies.find('\n')));
    close_with("");  // the refusal is in pending_ already
    return;
  }
  if (report.closing) {
    close_with(*report.closing);
    return;
  }
  if (unsent_bytes() > max_reply_bytes_) {
    // It does not read what it is sent; nothing more can be said to it.
    spdlog::warn("{}: closed: more than {} bytes of replies left unread", peer_, max_reply_bytes_);
    finalize();
    return;
  }
  flush();
  if (input_done_ && chunks_at_writer_ == 0 && !awaiting_commit_) {
    close_with("");  // everything it sent is acknowledged
  } else {
    read();
  }
}

void TcpSession::hurry_close() {
  if (closed_) return;
  close_with("");
  close_deadline_ = std::min(close_deadline_, Clock::now() + kHurriedGrace);
  arm_timer();
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
    read();  // it may have stopped for unread replies
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
  writer_.disconnect(id_);
  spdlog::debug("{}: closed", peer_);
}

// ---- timeouts ----------------------------------------------------------------------------------

void TcpSession::arm_timer() {
  if (closed_) return;
  Clock::time_point deadline = last_activity_ + idle_timeout_;
  if (closing_ || draining_) {
    deadline = close_deadline_;
  } else if (auth_timeout_ && !authenticated_) {
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
  if (held_by_writer()) {
    // Its lines wait at the writer (a commit, a lock): the client is waiting for us.
    last_activity_ = now;
    arm_timer();
    return;
  }
  if (auth_timeout_ && !authenticated_ && now >= started_ + *auth_timeout_) {
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
