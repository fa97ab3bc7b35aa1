// The service's HTTP server (config `http:`): the status page, the JSON API and the metrics of
// StatusApi (stagewell/status_api.hpp), carried over Boost.Beast on the service's io_context and
// answered on reader threads (http_readers.hpp).
//
// Limits on every connection (docs/http-api.md, "HTTP: the status page, API and metrics"): at most
// max_connections at once (more are answered 503 and closed); a request's header must arrive whole
// within request_timeout, which is also how long an idle kept-alive connection stays; header at
// most 8 KiB (431), body at most 1 KiB (413; GET and HEAD need none), target at most 2 KiB (414).
//
// Runs on the service's io_context only.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>
#include <map>
#include <memory>
#include <string>

#include "http_readers.hpp"
#include "stagewell/config.hpp"
#include "stagewell/result.hpp"

namespace stagewell::service {

class HttpSession;

class HttpServer : public std::enable_shared_from_this<HttpServer> {
 public:
  // Binds and listens. Fails (with the address and the reason) when the address cannot be used.
  static Result<std::shared_ptr<HttpServer>> open(boost::asio::io_context& io, const HttpSpec& spec,
                                                  std::unique_ptr<HttpReaders> readers);
  ~HttpServer();

  // Accepts no more and closes every connection (shutdown, reload).
  void stop();

  // ---- for its connections ----
  HttpReaders& readers() { return *readers_; }
  const HttpSpec& spec() const { return spec_; }
  void remove(const HttpSession* session);

 private:
  HttpServer(boost::asio::io_context& io, const HttpSpec& spec,
             std::unique_ptr<HttpReaders> readers);
  void accept();
  void on_accept(const boost::system::error_code& error, boost::asio::ip::tcp::socket socket);
  // Closes the connection that has waited longest for a request to begin; false when none waits.
  bool shed_longest_idle();
  static void answer_and_close(boost::asio::ip::tcp::socket& socket, std::string_view answer);

  boost::asio::io_context& io_;
  HttpSpec spec_;
  std::unique_ptr<HttpReaders> readers_;
  boost::asio::ip::tcp::acceptor acceptor_;
  boost::asio::steady_timer accept_retry_;
  std::map<const HttpSession*, std::weak_ptr<HttpSession>> sessions_;
  std::int64_t refused_ = 0;
  bool stopped_ = false;
};

}  // namespace stagewell::service
