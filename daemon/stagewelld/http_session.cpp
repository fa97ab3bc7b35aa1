#include "http_session.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <boost/beast/http/error.hpp>
#include <boost/beast/http/read.hpp>
#include <boost/beast/http/write.hpp>
#include <chrono>

#include "http_readers.hpp"
#include "http_server.hpp"

namespace stagewell::service {
namespace {

namespace beast = boost::beast;
namespace http = beast::http;
using boost::system::error_code;

// The read buffer's ceiling, bytes: room for the largest header and body the parser accepts, so
// that the parser's own limits (431, 413) are what a client meets.
constexpr std::size_t kBufferBytes = 2 * (kMaxHeaderBytes + kMaxBodyBytes);

std::chrono::milliseconds timeout_of(double seconds) {
  return std::chrono::milliseconds(static_cast<std::int64_t>(seconds * 1000.0));
}

}  // namespace

HttpSession::HttpSession(boost::asio::ip::tcp::socket socket, std::weak_ptr<HttpServer> server)
    : stream_(std::move(socket)), server_(std::move(server)), buffer_(kBufferBytes) {
  error_code ignored;
  address_ = stream_.socket().remote_endpoint(ignored).address();
}

HttpSession::~HttpSession() {
  if (auto server = server_.lock()) server->remove(this);
}

void HttpSession::start() { read(); }

void HttpSession::close() {
  error_code ignored;
  stream_.socket().shutdown(boost::asio::ip::tcp::socket::shutdown_both, ignored);
  stream_.close();
}

void HttpSession::read() {
  auto server = server_.lock();
  if (!server) return close();
  parser_.emplace();
  parser_->header_limit(kMaxHeaderBytes);
  parser_->body_limit(kMaxBodyBytes);
  if (buffer_.size() > 0) return on_first_bytes({}, 0);  // the next request came with the last
  // Idle: the request may take request_timeout to begin. Its first bytes start the header's own,
  // shorter deadline (on_first_bytes).
  idle_since_ = std::chrono::steady_clock::now();
  stream_.expires_after(timeout_of(server->spec().request_timeout_s));
  stream_.async_read_some(buffer_.prepare(kMaxHeaderBytes),
                          [self = shared_from_this()](const error_code& error, std::size_t bytes) {
                            self->on_first_bytes(error, bytes);
                          });
}

void HttpSession::on_first_bytes(const error_code& error, std::size_t bytes) {
  idle_since_.reset();
  if (error) return on_read(error);
  buffer_.commit(bytes);
  auto server = server_.lock();
  if (!server) return close();
  // One deadline for the whole header (not per byte): a client that trickles it, or sends half
  // and stops, is closed at the deadline however slowly it sends.
  stream_.expires_after(timeout_of(server->spec().header_timeout_s));
  http::async_read(
      stream_, buffer_, *parser_,
      [self = shared_from_this()](const error_code& error, std::size_t) { self->on_read(error); });
}

void HttpSession::on_read(const error_code& error) {
  if (error == http::error::end_of_stream || error == boost::asio::error::operation_aborted ||
      error == beast::error::timeout || error == boost::asio::error::connection_reset ||
      error == boost::asio::error::eof) {
    return close();  // the client left, was too slow, or the server stops
  }
  // RFC 9110 15.5.14 (413 Content Too Large); RFC 6585 5 (431 Request Header Fields Too Large).
  if (error == http::error::header_limit || error == http::error::buffer_overflow) {
    return refuse(431, fmt::format("the request header is larger than {} bytes", kMaxHeaderBytes));
  }
  if (error == http::error::body_limit) {
    return refuse(413, fmt::format("the request body is larger than {} bytes; GET and HEAD "
                                   "need none",
                                   kMaxBodyBytes));
  }
  if (error) {
    spdlog::debug("http: bad request: {}", error.message());
    return refuse(400, fmt::format("malformed request: {}", error.message()));
  }
  answer();
}

void HttpSession::answer() {
  auto server = server_.lock();
  if (!server) return close();
  const auto& request = parser_->get();
  head_ = request.method() == http::verb::head;
  keep_alive_ = request.keep_alive();
  version_ = request.version();
  HttpQuestion question{std::string(request.method_string()), std::string(request.target()),
                        std::string(request[http::field::accept])};
  spdlog::debug("http: {} {}", question.method, question.target);
  // Answered on a reader's thread; the connection reads nothing meanwhile.
  server->readers().answer(std::move(question), [self = shared_from_this()](HttpAnswer answer) {
    self->respond(std::move(answer));
  });
}

void HttpSession::respond(HttpAnswer answer) {
  response_ = {};
  response_.version(version_);
  response_.result(static_cast<unsigned>(answer.status));
  response_.set(http::field::server, "stagewelld");
  response_.set(http::field::content_type, answer.content_type);
  response_.set("X-Content-Type-Options", "nosniff");
  for (const auto& [name, value] : answer.headers) response_.set(name, value);
  response_.body() = std::move(answer.body);
  response_.prepare_payload();
  write(keep_alive_);
}

void HttpSession::refuse(int status, std::string_view message) {
  HttpAnswer answer = json_error(status, message);
  head_ = false;
  response_ = {};
  response_.version(11);
  response_.result(static_cast<unsigned>(status));
  response_.set(http::field::server, "stagewelld");
  response_.set(http::field::content_type, answer.content_type);
  response_.body() = std::move(answer.body);
  response_.prepare_payload();
  write(false);  // the rest of what the client sent cannot be trusted to frame a next request
}

void HttpSession::write(bool keep_alive) {
  response_.keep_alive(keep_alive);
  if (head_) response_.body().clear();  // the Content-Length of the GET answer stays
  auto server = server_.lock();
  if (!server) return close();
  stream_.expires_after(timeout_of(server->spec().request_timeout_s));
  http::async_write(stream_, response_,
                    [self = shared_from_this(), keep_alive](const error_code& error, std::size_t) {
                      if (error || !keep_alive) return self->close();
                      self->read();
                    });
}

}  // namespace stagewell::service
