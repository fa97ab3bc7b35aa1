// The `type: tcp` sources of the service, on the network loop: one listener per source accepting
// clients, each connection's socket (TcpSession) passing its bytes to the writer, where the
// protocol runs (tcp_connections.hpp), and its replies back to the client.
//
// The loop never waits for the writer: a connection hands over one chunk and reads the next once
// the writer has taken it (tcp_link.hpp). A writer busy with a commit or waiting for the
// database's lock therefore holds clients back through TCP; their connections stay open.
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
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/result.hpp"

namespace stagewell::service {

class TcpSession;
class Writer;

class TcpListener : public std::enable_shared_from_this<TcpListener> {
 public:
  // Binds and listens. Fails (with the address and the reason) when the address cannot be used.
  static Result<std::shared_ptr<TcpListener>> open(boost::asio::io_context& io,
                                                   const SourceSpec& spec, Writer& writer);
  ~TcpListener();

  // Accepts no more; connections are told by the writer (the stop's or reload's last word).
  void stop();
  // The service ends: each connection closes once the writer's last word is sent.
  void close_when_said();

  void remove(const TcpSession* session);

 private:
  TcpListener(boost::asio::io_context& io, const SourceSpec& spec, Writer& writer);
  void accept();
  void on_accept(const boost::system::error_code& error, boost::asio::ip::tcp::socket socket);
  void refuse_busy(boost::asio::ip::tcp::socket socket, const std::string& peer);
  std::vector<std::shared_ptr<TcpSession>> live_sessions() const;

  boost::asio::io_context& io_;
  SourceSpec spec_;
  std::string label_;  // "tcp 127.0.0.1:7207"
  Writer& writer_;
  boost::asio::ip::tcp::acceptor acceptor_;
  boost::asio::steady_timer accept_retry_;  // after an accept error (out of descriptors)
  std::map<const TcpSession*, std::weak_ptr<TcpSession>> sessions_;
  std::shared_ptr<int> refusing_ = std::make_shared<int>(0);  // refusals being sent
  bool stopping_ = false;
  std::int64_t busy_refusals_ = 0;
  static inline std::uint64_t next_id_ = 1;  // connection ids, unique within the process
};

// Every tcp source of one configuration.
class TcpSources {
 public:
  // Opens a listener for each `type: tcp` source of `config`. Fails when one cannot listen.
  static Result<std::unique_ptr<TcpSources>> open(boost::asio::io_context& io, const Config& config,
                                                  Writer& writer);
  ~TcpSources();  // stops accepting
  // See TcpListener::stop() and close_when_said().
  void stop();
  void close_when_said();
  std::size_t size() const { return listeners_.size(); }

 private:
  std::vector<std::shared_ptr<TcpListener>> listeners_;
};

}  // namespace stagewell::service
