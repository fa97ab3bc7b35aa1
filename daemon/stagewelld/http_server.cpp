#include "http_server.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <boost/asio/write.hpp>
#include <chrono>

#include "http_session.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;
using asio::ip::tcp;
using boost::system::error_code;

// Pause after a failed accept (typically: out of file descriptors) before accepting again.
constexpr auto kAcceptRetry = std::chrono::milliseconds(100);
// One log line per this many refusals at the connection cap (a flood must not flood the log).
constexpr std::int64_t kRefusedLogEvery = 100;

// RFC 9110 15.6.4 (503 Service Unavailable), with Retry-After (10.2.3).
constexpr std::string_view kBusyAnswer =
    "HTTP/1.1 503 Service Unavailable\r\nServer: stagewelld\r\nContent-Type: application/json; "
    "charset=utf-8\r\nRetry-After: 5\r\nConnection: close\r\nContent-Length: 56\r\n\r\n"
    "{\"error\":\"too many connections at once; try again soon\"}";

// RFC 6585 4 (429 Too Many Requests): one address has as many connections as it may.
constexpr std::string_view kTooManyAnswer =
    "HTTP/1.1 429 Too Many Requests\r\nServer: stagewelld\r\nContent-Type: application/json; "
    "charset=utf-8\r\nRetry-After: 5\r\nConnection: close\r\nContent-Length: 68\r\n\r\n"
    "{\"error\":\"too many connections from your address; close some first\"}";

}  // namespace

HttpServer::HttpServer(asio::io_context& io, const HttpSpec& spec,
                       std::unique_ptr<HttpReaders> readers)
    : io_(io), spec_(spec), readers_(std::move(readers)), acceptor_(io), accept_retry_(io) {}

HttpServer::~HttpServer() { stop(); }

Result<std::shared_ptr<HttpServer>> HttpServer::open(asio::io_context& io, const HttpSpec& spec,
                                                     std::unique_ptr<HttpReaders> readers) {
  const std::string where = spec.address.find(':') != std::string::npos
                                ? fmt::format("[{}]:{}", spec.address, spec.port)
                                : fmt::format("{}:{}", spec.address, spec.port);
  std::shared_ptr<HttpServer> server(new HttpServer(io, spec, std::move(readers)));
  error_code error;
  const auto address = asio::ip::make_address(spec.address, error);
  if (error)
    return fail(ErrorKind::invalid_argument, fmt::format("http {}: {}", where, error.message()));
  const tcp::endpoint endpoint(address, static_cast<unsigned short>(spec.port));
  auto& acceptor = server->acceptor_;
  acceptor.open(endpoint.protocol(), error);
  if (!error) acceptor.set_option(asio::socket_base::reuse_address(true), error);
  if (!error) acceptor.bind(endpoint, error);
  if (!error) acceptor.listen(asio::socket_base::max_listen_connections, error);
  if (!error) {
    server->accept();
    if (spec.loopback) {
      spdlog::info("http: the status page is at http://{}/", where);
    } else {
      spdlog::warn(
          "http: listening on {}, beyond this machine: the status page, API and metrics "
          "are readable by anyone who can reach it (no authentication)",
          where);
    }
    return server;
  }
  return fail(ErrorKind::io, fmt::format("http: cannot listen on {}: {}", where, error.message()));
}

void HttpServer::stop() {
  if (stopped_) return;
  stopped_ = true;
  error_code ignored;
  acceptor_.close(ignored);
  accept_retry_.cancel();
  auto sessions = std::move(sessions_);
  sessions_.clear();
  for (auto& [key, weak] : sessions) {
    if (auto session = weak.lock()) session->close();
  }
}

void HttpServer::remove(const HttpSession* session) { sessions_.erase(session); }

bool HttpServer::shed_longest_idle() {
  std::shared_ptr<HttpSession> longest;
  for (const auto& [key, weak] : sessions_) {
    const auto session = weak.lock();
    if (!session || !session->idle_since()) continue;
    if (!longest || *session->idle_since() < *longest->idle_since()) longest = session;
  }
  if (!longest) return false;
  // A connection waiting for a request that has not begun loses nothing: its client opens
  // another when it has something to ask.
  spdlog::debug("http: at {} connections, closing the one idle longest ({})", sessions_.size(),
                longest->address().to_string());
  sessions_.erase(longest.get());
  longest->close();
  return true;
}

void HttpServer::answer_and_close(tcp::socket& socket, std::string_view answer) {
  error_code ignored;
  socket.non_blocking(true, ignored);
  socket.write_some(asio::buffer(answer), ignored);
  socket.shutdown(tcp::socket::shutdown_both, ignored);
  socket.close(ignored);
}

void HttpServer::accept() {
  acceptor_.async_accept([self = shared_from_this()](const error_code& error, tcp::socket socket) {
    self->on_accept(error, std::move(socket));
  });
}

void HttpServer::on_accept(const error_code& error, tcp::socket socket) {
  if (stopped_ || error == asio::error::operation_aborted) return;
  if (error) {
    spdlog::warn("http: accept failed: {}", error.message());
    accept_retry_.expires_after(kAcceptRetry);
    accept_retry_.async_wait([self = shared_from_this()](const error_code& e) {
      if (!e && !self->stopped_) self->accept();
    });
    return;
  }
  error_code ignored;
  const auto address = socket.remote_endpoint(ignored).address();
  std::size_t from_address = 0;
  for (const auto& [key, weak] : sessions_) {
    if (const auto session = weak.lock(); session && session->address() == address) {
      ++from_address;
    }
  }
  if (from_address >= static_cast<std::size_t>(spec_.max_connections_per_address)) {
    // One client may not hold the page from the others, however many connections it opens.
    if (refused_++ % kRefusedLogEvery == 0) {
      spdlog::warn(
          "http: {} has {} connections open, the most allowed from one address; "
          "refusing ({} refused so far)",
          address.to_string(), from_address, refused_);
    }
    answer_and_close(socket, kTooManyAnswer);
  } else if (sessions_.size() >= static_cast<std::size_t>(spec_.max_connections) &&
             !shed_longest_idle()) {
    // At the cap with every connection busy: one short answer, written without waiting (it fits
    // any socket buffer), then closed. Nothing is kept for a refused connection.
    if (refused_++ % kRefusedLogEvery == 0) {
      spdlog::warn("http: {} connections open, the most allowed; refusing ({} refused so far)",
                   sessions_.size(), refused_);
    }
    answer_and_close(socket, kBusyAnswer);
  } else {
    auto session = std::make_shared<HttpSession>(std::move(socket), weak_from_this());
    sessions_.emplace(session.get(), session);
    session->start();
  }
  accept();
}

}  // namespace stagewell::service
