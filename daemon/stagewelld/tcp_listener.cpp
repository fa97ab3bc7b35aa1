#include "tcp_listener.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <array>
#include <boost/asio/write.hpp>
#include <chrono>

#include "stagewell/tcp_intake.hpp"
#include "tcp_session.hpp"
#include "writer.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;
using asio::ip::tcp;
using boost::system::error_code;

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

TcpListener::TcpListener(asio::io_context& io, const SourceSpec& spec, Writer& writer)
    : io_(io), spec_(spec), writer_(writer), acceptor_(io), accept_retry_(io) {
  const bool v6 = spec_.tcp.address.find(':') != std::string::npos;
  label_ = v6 ? fmt::format("tcp [{}]:{}", spec_.tcp.address, spec_.tcp.port)
              : fmt::format("tcp {}:{}", spec_.tcp.address, spec_.tcp.port);
}

TcpListener::~TcpListener() = default;

Result<std::shared_ptr<TcpListener>> TcpListener::open(asio::io_context& io, const SourceSpec& spec,
                                                       Writer& writer) {
  std::shared_ptr<TcpListener> listener(new TcpListener(io, spec, writer));
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
  if (stopping_ || error == asio::error::operation_aborted) return;
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
  } else {
    const std::uint64_t id = next_id_++;
    auto session = std::make_shared<TcpSession>(std::move(socket), id, peer, spec_.tcp,
                                                shared_from_this(), writer_);
    sessions_.emplace(session.get(), session);
    session->start(TcpLink{id, spec_, peer, label_, {}});
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
}

void TcpListener::close_when_said() {
  stop();
  for (const auto& session : live_sessions()) session->hurry_close();
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

// ---- TcpSources --------------------------------------------------------------------------------

Result<std::unique_ptr<TcpSources>> TcpSources::open(asio::io_context& io, const Config& config,
                                                     Writer& writer) {
  auto sources = std::make_unique<TcpSources>();
  for (const auto& spec : config.sources) {
    if (spec.type != SourceSpec::Type::tcp) continue;
    auto listener = TcpListener::open(io, spec, writer);
    if (!listener) return std::unexpected(listener.error());
    sources->listeners_.push_back(std::move(*listener));
  }
  return sources;
}

TcpSources::~TcpSources() { stop(); }

void TcpSources::stop() {
  for (const auto& listener : listeners_) listener->stop();
}

void TcpSources::close_when_said() {
  for (const auto& listener : listeners_) listener->close_when_said();
}

}  // namespace stagewell::service
