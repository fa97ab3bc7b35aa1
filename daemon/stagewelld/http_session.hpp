// One HTTP connection of the HttpServer: reads a request within the limits, has it answered on a
// reader's thread (http_readers.hpp), writes the answer, and either reads the next (keep-alive) or
// closes.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/ip/tcp.hpp>
#include <boost/beast/core/flat_buffer.hpp>
#include <boost/beast/core/tcp_stream.hpp>
#include <boost/beast/http/message.hpp>
#include <boost/beast/http/parser.hpp>
#include <boost/beast/http/string_body.hpp>
#include <chrono>
#include <memory>
#include <optional>

#include "stagewell/status_api.hpp"

namespace stagewell::service {

class HttpServer;

// Longest request header (request line and fields), bytes: longer is answered 431.
inline constexpr std::size_t kMaxHeaderBytes = 8 * 1024;
// Longest request body, bytes: GET and HEAD carry none; longer is answered 413.
inline constexpr std::size_t kMaxBodyBytes = 1024;

class HttpSession : public std::enable_shared_from_this<HttpSession> {
 public:
  HttpSession(boost::asio::ip::tcp::socket socket, std::weak_ptr<HttpServer> server);
  ~HttpSession();
  void start();
  void close();

  // The client's address, as the per-address limit counts it.
  const boost::asio::ip::address& address() const { return address_; }
  // While it waits for a request to begin (new, or idle between requests): since when; empty
  // while a request is read, answered or written. The server sheds the longest idle first.
  std::optional<std::chrono::steady_clock::time_point> idle_since() const { return idle_since_; }

 private:
  void read();
  void on_first_bytes(const boost::system::error_code& error, std::size_t bytes);
  void on_read(const boost::system::error_code& error);
  void answer();
  void respond(HttpAnswer answer);
  void refuse(int status, std::string_view message);
  void write(bool keep_alive);

  boost::beast::tcp_stream stream_;
  std::weak_ptr<HttpServer> server_;
  boost::beast::flat_buffer buffer_;
  std::optional<boost::beast::http::request_parser<boost::beast::http::string_body>> parser_;
  boost::beast::http::response<boost::beast::http::string_body> response_;
  boost::asio::ip::address address_;
  std::optional<std::chrono::steady_clock::time_point> idle_since_;
  bool head_ = false;  // the request was HEAD: send the header fields only
  bool keep_alive_ = false;
  unsigned version_ = 11;
};

}  // namespace stagewell::service
