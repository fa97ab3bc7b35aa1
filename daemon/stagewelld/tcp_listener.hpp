// The `type: tcp` sources of the service: one listener per source, each accepting clients on the
// service's io_context and feeding their lines to the shared Ingestor (the protocol:
// stagewell/tcp_intake.hpp).
//
// Acknowledgement: every connection numbers its lines; after each successful commit (the
// Ingestor's commit observer) every connection is told how far it is stored. Lines that opened no
// batch (repeats of stored readings) are acknowledged at the next check once no batch is open.
// After a dropped batch, a connection with lines in it is closed, so that its client sends them
// again.
//
// Backpressure: when the open batch is due (its size or age), every connection stops reading until
// the commit is done; a commit that takes long (a lagging store) thus holds the clients back
// through TCP instead of growing the batch. While connections hold uncommitted lines the listener
// checks every 10 ms whether the batch is due, so an acknowledgement comes within the batch age
// (not at the next poll of the file sources).
//
// Runs on the service's io_context only.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/result.hpp"

namespace stagewell::service {

class TcpSession;

// What a tcp source needs from the service that runs it.
struct TcpHooks {
  // Commits the open batch if it is due (Ingestor::commit_due), dealing with a failure.
  std::function<void()> commit_if_due;
  // A reading or reject could not be stored: the batch is spoiled; drop it and recover.
  std::function<void(const Error&)> store_failed;
};

class TcpListener : public std::enable_shared_from_this<TcpListener> {
 public:
  // Binds and listens. Fails (with the address and the reason) when the address cannot be used.
  static Result<std::shared_ptr<TcpListener>> open(boost::asio::io_context& io,
                                                   const SourceSpec& spec, Ingestor& ingestor,
                                                   TcpHooks hooks);
  ~TcpListener();

  // The service stops: accept no more, read no more; each connection closes once its lines are
  // acknowledged by the final commit.
  void stop();
  // The Ingestor is about to be destroyed: close every connection now.
  void detach();

  // ---- for its connections ----
  // True while connections must not feed: a commit is due or running, the store failed, or the
  // service stops.
  bool holding_back() const { return commit_requested_ || spoiled_ || stopping_ || !ingestor_; }
  // Calls session->resume() once no longer holding back.
  void wait(std::shared_ptr<TcpSession> session);
  // A connection fed lines; `awaiting_commit`: some of its lines wait for a commit.
  void fed(bool awaiting_commit);
  // A client has sent its last line and waits for its acknowledgement: commit now rather than
  // when the batch is due (as `stagewell ingest` commits at the end of a file).
  void commit_soon();
  void store_failed(const Error& error);
  void remove(const TcpSession* session);

 private:
  TcpListener(boost::asio::io_context& io, const SourceSpec& spec, Ingestor& ingestor,
              TcpHooks hooks);
  void accept();
  void on_accept(const boost::system::error_code& error, boost::asio::ip::tcp::socket socket);
  void refuse_busy(boost::asio::ip::tcp::socket socket, const std::string& peer);
  void on_commit(bool committed);
  void request_commit(bool now);
  void arm_tick();
  void resume_waiting();
  std::vector<std::shared_ptr<TcpSession>> live_sessions() const;

  boost::asio::io_context& io_;
  SourceSpec spec_;
  std::string label_;   // "tcp 127.0.0.1:7207"
  Ingestor* ingestor_;  // null once detached
  TcpHooks hooks_;
  boost::asio::ip::tcp::acceptor acceptor_;
  boost::asio::steady_timer tick_;          // checks whether the batch is due
  boost::asio::steady_timer accept_retry_;  // after an accept error (out of descriptors)
  std::map<const TcpSession*, std::weak_ptr<TcpSession>> sessions_;
  std::vector<std::weak_ptr<TcpSession>> waiting_;
  std::shared_ptr<int> refusing_ = std::make_shared<int>(0);  // refusals being sent
  bool commit_requested_ = false;
  bool commit_now_ = false;  // the requested commit is wanted whether due or not
  bool spoiled_ = false;
  bool stopping_ = false;
  bool ticking_ = false;
  bool uncommitted_ = false;              // some connection has lines waiting for a commit
  std::int64_t progress_written_ms_ = 0;  // when fed() last wrote this listener's progress row
  std::int64_t busy_refusals_ = 0;
};

// Every tcp source of one configuration. Destroying it closes every connection (the Ingestor it
// was opened with is about to go).
class TcpSources {
 public:
  // Opens a listener for each `type: tcp` source of the Ingestor's configuration. Fails when one
  // cannot listen.
  static Result<std::unique_ptr<TcpSources>> open(boost::asio::io_context& io, Ingestor& ingestor,
                                                  const TcpHooks& hooks);
  ~TcpSources();
  // See TcpListener::stop().
  void stop();
  std::size_t size() const { return listeners_.size(); }

 private:
  std::vector<std::shared_ptr<TcpListener>> listeners_;
};

}  // namespace stagewell::service
