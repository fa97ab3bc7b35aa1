#include "tcp_listener.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <array>
#include <boost/asio/post.hpp>
#include <boost/asio/write.hpp>
#include <chrono>

#include "stagewell/tcp_intake.hpp"
#include "tcp_session.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;
using asio::ip::tcp;
using boost::system::error_code;

// How often, while connections hold uncommitted lines, the listener asks whether the batch is due.
// An acknowledgement comes at most this much after the batch age (IngestorOptions).
constexpr auto kCommitCheck = std::chrono::milliseconds(10);
// Pause after a failed accept (typically: out of file descriptors) before accepting again.
constexpr auto kAcceptRetry = std::chrono::milliseconds(100);
// A refused connection is given this long to read why before it is closed.
constexpr auto kRefusalGrace = std::chrono::seconds(1);
// Refusals in flight at once; beyond that a connection flood is closed without a word.
constexpr int kMostRefusing = 64;
// One log line per this many busy refusals (a flood must not flood the log).
constexpr std::int64_t kBusyLogEvery = 100;

std::string peer_of(const tcp::socket& socket) {
  error_code error;
  const auto endpoint = socket.remote_endpoint(error);
  if (error) return "unknown peer";
  const auto address = endpoint.address();
  return address.is_v6() ? fmt::format("[{}]:{}", address.to_string(), endpoint.port())
                         : fmt::format("{}:{}", address.to_string(), endpoint.port());
}

// A connection turned away before it starts: one line saying why, FIN, then close once the client
// has closed too (or after kRefusalGrace).
class Refusal : public std::enable_shared_from_this<Refusal> {
 public:
  Refusal(tcp::socket socket, std::string line, std::shared_ptr<int> count)
      : socket_(std::move(socket)),
        timer_(socket_.get_executor()),
        line_(std::move(line)),
        count_(std::move(count)) {
    ++*count_;
  }
  ~Refusal() { --*count_; }

  void start() {
    timer_.expires_after(kRefusalGrace);
    timer_.async_wait([self = shared_from_this()](const error_code&) { self->close(); });
    asio::async_write(socket_, asio::buffer(line_),
                      [self = shared_from_this()](const error_code& error, std::size_t) {
                        if (error) return self->close();
                        error_code ignored;
                        self->socket_.shutdown(tcp::socket::shutdown_send, ignored);
                        self->drain();
                      });
  }

 private:
  void drain() {
    socket_.async_read_some(asio::buffer(sink_),
                            [self = shared_from_this()](const error_code& error, std::size_t) {
                              if (error) return self->close();
                              self->drain();
                            });
  }
  void close() {
    error_code ignored;
    socket_.close(ignored);
    timer_.cancel();
  }

  tcp::socket socket_;
  asio::steady_timer timer_;
  std::string line_;
  std::shared_ptr<int> count_;
  std::array<char, 1024> sink_{};
};

}  // namespace

// ---- TcpListener -------------------------------------------------------------------------------

TcpListener::TcpListener(asio::io_context& io, const SourceSpec& spec, Ingestor& ingestor,
                         TcpHooks hooks)
    : io_(io),
      spec_(spec),
      ingestor_(&ingestor),
      hooks_(std::move(hooks)),
      acceptor_(io),
      tick_(io),
      accept_retry_(io) {
  const bool v6 = spec_.tcp.address.find(':') != std::string::npos;
  label_ = v6 ? fmt::format("tcp [{}]:{}", spec_.tcp.address, spec_.tcp.port)
              : fmt::format("tcp {}:{}", spec_.tcp.address, spec_.tcp.port);
}

TcpListener::~TcpListener() = default;

Result<std::shared_ptr<TcpListener>> TcpListener::open(asio::io_context& io, const SourceSpec& spec,
                                                       Ingestor& ingestor, TcpHooks hooks) {
  std::shared_ptr<TcpListener> listener(new TcpListener(io, spec, ingestor, std::move(hooks)));
  error_code error;
  const auto address = asio::ip::make_address(spec.tcp.address, error);
  const tcp::endpoint endpoint(address, static_cast<unsigned short>(spec.tcp.port));
  auto& acceptor = listener->acceptor_;
  if (!error) acceptor.open(endpoint.protocol(), error);
  // A restarted service must not wait for the old connections' TIME_WAIT to end.
  if (!error) acceptor.set_option(tcp::acceptor::reuse_address(true), error);
  if (!error) acceptor.bind(endpoint, error);
  if (!error) acceptor.listen(asio::socket_base::max_listen_connections, error);
  if (error) {
    return fail(ErrorKind::io, fmt::format("{} (sources, line {}): cannot listen: {}",
                                           listener->label_, spec.line, error.message()));
  }
  ingestor.add_commit_observer([weak = std::weak_ptr<TcpListener>(listener)](bool committed) {
    if (auto self = weak.lock()) self->on_commit(committed);
  });
  spdlog::info("source: {}, {}, at most {} clients, lines up to {} bytes, idle timeout {} s",
               listener->label_,
               spec.tcp.secret ? "clients must send the shared secret" : "no secret (loopback)",
               spec.tcp.max_clients, spec.tcp.max_line_bytes, spec.tcp.idle_timeout_s);
  listener->accept();
  return listener;
}

void TcpListener::accept() {
  acceptor_.async_accept([weak = weak_from_this()](const error_code& error, tcp::socket socket) {
    if (auto self = weak.lock()) self->on_accept(error, std::move(socket));
  });
}

void TcpListener::on_accept(const error_code& error, tcp::socket socket) {
  if (stopping_ || !ingestor_ || error == asio::error::operation_aborted) return;
  if (error) {
    spdlog::warn("{}: cannot accept a connection: {}", label_, error.message());
    accept_retry_.expires_after(kAcceptRetry);
    accept_retry_.async_wait([weak = weak_from_this()](const error_code& cancelled) {
      auto self = weak.lock();
      if (self && !cancelled) self->accept();
    });
    return;
  }
  const std::string peer = peer_of(socket);
  if (sessions_.size() >= static_cast<std::size_t>(spec_.tcp.max_clients)) {
    refuse_busy(std::move(socket), peer);
  } else if (auto intake = TcpIntake::create(spec_, "tcp " + peer, *ingestor_); !intake) {
    spdlog::error("{}: {}", label_, intake.error().message);  // the zone was checked at load
  } else {
    auto session = std::make_shared<TcpSession>(std::move(socket), peer, spec_.tcp,
                                                shared_from_this(), std::move(*intake));
    sessions_.emplace(session.get(), session);
    session->start();
  }
  accept();
}

void TcpListener::refuse_busy(tcp::socket socket, const std::string& peer) {
  ++busy_refusals_;
  if (busy_refusals_ % kBusyLogEvery == 1) {
    spdlog::warn("{}: refused {}: {} clients connected already ({} refused so far)", label_, peer,
                 sessions_.size(), busy_refusals_);
  }
  if (*refusing_ >= kMostRefusing) return;  // the socket closes here, without a word
  std::make_shared<Refusal>(std::move(socket),
                            reply::refused("busy", "too many clients; try again later"), refusing_)
      ->start();
}

void TcpListener::stop() {
  stopping_ = true;
  error_code ignored;
  acceptor_.close(ignored);
  accept_retry_.cancel();
  tick_.cancel();
  for (const auto& session : live_sessions()) session->stop();
}

void TcpListener::detach() {
  stopping_ = true;
  error_code ignored;
  acceptor_.close(ignored);
  accept_retry_.cancel();
  tick_.cancel();
  for (const auto& session : live_sessions()) {
    session->detach(
        "the service is reloading its configuration; send again any lines after your "
        "last ok");
  }
  ingestor_ = nullptr;
}

std::vector<std::shared_ptr<TcpSession>> TcpListener::live_sessions() const {
  // A copy: a session may close (and leave sessions_) while it is being called.
  std::vector<std::shared_ptr<TcpSession>> out;
  out.reserve(sessions_.size());
  for (const auto& [key, weak] : sessions_) {
    if (auto session = weak.lock()) out.push_back(std::move(session));
  }
  return out;
}

void TcpListener::remove(const TcpSession* session) { sessions_.erase(session); }

// ---- commits and backpressure ------------------------------------------------------------------

void TcpListener::fed(bool awaiting_commit) {
  if (!ingestor_) return;
  if (awaiting_commit) {
    uncommitted_ = true;
    arm_tick();
    // When lines last arrived, as this listener's row of ingest_progress (no offset: a socket
    // cannot be re-read), so that the metrics show its lag like a file's. At most once a second,
    // in the batch with the lines.
    const std::int64_t now = ingestor_->now_ms();
    if (now - progress_written_ms_ >= 1000) {
      if (auto written = ingestor_->record_progress(label_, {"tcp", 0, now}); !written) {
        store_failed(written.error());
        return;
      }
      progress_written_ms_ = now;
    }
  }
  if (ingestor_->commit_due()) request_commit(false);
}

void TcpListener::commit_soon() {
  if (ingestor_ && !stopping_) request_commit(true);
}

// Holds every connection back and commits from the loop, outside any session's handler.
void TcpListener::request_commit(bool now) {
  commit_now_ = commit_now_ || now;
  if (commit_requested_) return;
  commit_requested_ = true;
  asio::post(io_, [weak = weak_from_this()] {
    auto self = weak.lock();
    if (!self) return;
    if (self->ingestor_ && !self->stopping_) {
      if (!self->commit_now_) {
        self->hooks_.commit_if_due();
      } else if (auto committed = self->ingestor_->commit(); !committed) {
        self->hooks_.store_failed(committed.error());
      }
    }
    self->commit_requested_ = false;
    self->commit_now_ = false;
    self->resume_waiting();
  });
}

void TcpListener::arm_tick() {
  if (ticking_ || stopping_ || !ingestor_) return;
  ticking_ = true;
  tick_.expires_after(kCommitCheck);
  tick_.async_wait([weak = weak_from_this()](const error_code& error) {
    auto self = weak.lock();
    if (!self) return;
    self->ticking_ = false;
    if (error || !self->ingestor_ || !self->uncommitted_) return;
    if (!self->ingestor_->batch_open()) {
      // Lines fed, yet no batch: they were repeats of stored readings. Settled: acknowledge.
      self->on_commit(true);
      return;
    }
    self->hooks_.commit_if_due();
    if (self->uncommitted_) self->arm_tick();
  });
}

void TcpListener::store_failed(const Error& error) {
  if (spoiled_) return;
  spoiled_ = true;  // hold everyone back until the batch is dropped
  asio::post(io_, [weak = weak_from_this(), error] {
    auto self = weak.lock();
    if (!self) return;
    if (self->ingestor_) self->hooks_.store_failed(error);
    self->spoiled_ = false;
    self->resume_waiting();
  });
}

void TcpListener::on_commit(bool committed) {
  uncommitted_ = false;  // committed, or dropped (and its connections closed)
  if (!committed) spoiled_ = false;
  for (const auto& session : live_sessions()) session->on_commit(committed);
  // Not from here: the Ingestor is still inside commit() or reset() (its check state may not be
  // restored yet), so feeding must wait for the loop.
  asio::post(io_, [weak = weak_from_this()] {
    if (auto self = weak.lock()) self->resume_waiting();
  });
}

void TcpListener::wait(std::shared_ptr<TcpSession> session) { waiting_.push_back(session); }

void TcpListener::resume_waiting() {
  if (holding_back() || waiting_.empty()) return;
  auto waiting = std::move(waiting_);
  waiting_.clear();
  for (const auto& weak : waiting) {
    if (auto session = weak.lock()) session->resume();
  }
}

// ---- TcpSources --------------------------------------------------------------------------------

Result<std::unique_ptr<TcpSources>> TcpSources::open(asio::io_context& io, Ingestor& ingestor,
                                                     const TcpHooks& hooks) {
  auto sources = std::make_unique<TcpSources>();
  for (const auto& spec : ingestor.config().sources) {
    if (spec.type != SourceSpec::Type::tcp) continue;
    auto listener = TcpListener::open(io, spec, ingestor, hooks);
    if (!listener) return std::unexpected(listener.error());
    sources->listeners_.push_back(std::move(*listener));
  }
  return sources;
}

TcpSources::~TcpSources() {
  for (const auto& listener : listeners_) listener->detach();
}

void TcpSources::stop() {
  for (const auto& listener : listeners_) listener->stop();
}

}  // namespace stagewell::service
