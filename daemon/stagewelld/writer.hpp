// The service's writer: one thread that owns everything that may wait — the database connection
// that writes (the Ingestor), the source files, the tcp sources' protocol (which feeds the
// Ingestor), the commits, recomputation and the alarms' clock. The network loop hands it work and
// gets answers back; it never waits for the writer.
//
// While another process holds the database's write lock, the writer waits for it (logging once
// that it waits and once when it works again); its queue holds at most one unread chunk per tcp
// connection, since a connection reads no more until its last chunk is taken. A stop interrupts
// such a wait at cancel_waits(): what was not committed is read again at the next start, and tcp
// clients send again the lines after their last `ok`.
//
// Thread-safety: every public member may be called from any thread; each posts to the writer's
// own io_context and returns at once. `done` callbacks and tcp deliveries are posted to the loop's
// io_context, never run on the writer's thread.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <atomic>
#include <boost/asio/executor_work_guard.hpp>
#include <boost/asio/io_context.hpp>
#include <cstdint>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <thread>

#include "stagewell/config.hpp"
#include "stagewell/result.hpp"
#include "stagewell/status_api.hpp"
#include "tcp_link.hpp"

namespace stagewell::service {

class WriterCore;

class Writer {
 public:
  explicit Writer(boost::asio::io_context& loop);
  ~Writer();  // ends the thread; call stop() first for a clean end

  // Opens the database and the file sources of `config` and starts reading; done(the database's
  // schema version, or why it could not). Recomputation of readings the configuration computes
  // differently starts then too.
  void open(Config config, std::function<void(Result<int>)> done);

  struct Reloaded {
    bool applied = false;    // the new configuration runs
    bool running = true;     // a configuration runs (the new one, or the previous one again)
    std::string error;       // why the new one could not be applied
    std::string totals;      // what was done before the reload, for the log
    int schema_version = 0;  // of the database, when applied
  };
  // Commits what is in hand, closes the running configuration's sources and tcp connections
  // (they were told by the loop) and opens `config` instead; when it cannot, the previous one is
  // opened again.
  void reload(Config config, std::function<void(Reloaded)> done);

  // Stops taking input and commits what is in hand; each tcp connection is acknowledged what was
  // committed and told that the service stops. done(exit status): 0, or 1 when the final commit
  // failed for another reason than a stop deadline.
  void stop(std::function<void(int exit_status)> done);
  // From now on a wait for a lock another process holds gives up at once (the stop deadline).
  // Safe to call from a signal handler's completion on any thread.
  void cancel_waits() { cancel_->store(true); }

  // ---- tcp connections (tcp_link.hpp) ----
  void connect(TcpLink link);
  void feed(std::uint64_t connection, std::string bytes);
  void finish(std::uint64_t connection);
  void disconnect(std::uint64_t connection);

  // The counters the metrics show (since the service started, across reloads), for any thread;
  // the source stays valid after the Writer is gone.
  LiveFiguresSource live() const;

 private:
  template <typename Work>
  void post(Work work);

  boost::asio::io_context& loop_;
  boost::asio::io_context io_;
  boost::asio::executor_work_guard<boost::asio::io_context::executor_type> work_;
  std::shared_ptr<std::atomic<bool>> cancel_ = std::make_shared<std::atomic<bool>>(false);
  std::unique_ptr<WriterCore> core_;  // used on the writer's thread only
  struct LiveBoard {
    std::mutex mutex;
    LiveFigures figures;  // guarded by mutex; published by the core after each commit
  };
  std::shared_ptr<LiveBoard> live_ = std::make_shared<LiveBoard>();
  std::thread thread_;

  friend class WriterCore;
};

}  // namespace stagewell::service
