// The service: the network loop (one Boost.Asio io_context on the main thread), which runs the
// signals, the tcp sources' sockets and the HTTP server, and hands everything that may wait to the
// writer (writer.hpp: the database, the source files, commits, recomputation) and to the HTTP
// readers (http_readers.hpp). The loop itself never waits on SQLite, a lock or a large read.
//
// Signals set state; the work happens in the loop. SIGTERM or SIGINT: stop taking input, commit
// what is in hand, return (exit 0); a second one ends the process at once (the default action is
// restored after the first). A stop waits at most about a second for a lock another process holds
// on the database: what was not committed then is read again at the next start. SIGHUP: reopen
// the log file and reload the configuration, validated first; an invalid one is logged and the
// running one kept.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/executor_work_guard.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/signal_set.hpp>
#include <boost/asio/steady_timer.hpp>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "http_server.hpp"
#include "logging.hpp"
#include "readiness.hpp"
#include "shipping.hpp"
#include "stagewell/config.hpp"
#include "stagewell/service_lock.hpp"
#include "tcp_listener.hpp"
#include "writer.hpp"

namespace stagewell::service {

class Service {
 public:
  Service(boost::asio::io_context& io, std::string config_path, Logging& logging);
  ~Service();

  // Exit status of a start refused because the database file is damaged: the systemd unit does
  // not restart on it (RestartPreventExitStatus), since no restart can mend the file.
  static constexpr int kExitDatabaseDamaged = 3;

  // Loads the configuration, takes the database's lock and starts the writer, which opens the
  // database; the network side opens once it has. Returns false (after logging why) when the
  // configuration or the lock cannot be had; a database that cannot be opened ends the loop later
  // with exit_code() 1, or kExitDatabaseDamaged when the file is damaged.
  bool start();
  int exit_code() const { return exit_code_; }

 private:
  void opened(const Config& config, Result<int> schema_version);
  void log_started(int schema_version);
  bool open_network();  // tcp listeners and the HTTP server of config_
  void close_network();
  void wait_for_signal();
  void on_signal(int signal_number);
  void reload();
  void reloaded(Config config, std::shared_ptr<std::optional<ServiceLock>> new_lock,
                LogSpec previous_log, const Writer::Reloaded& outcome);
  void shut_down();
  void stopped(int writer_status);
  void schedule_log_check();
  void schedule_watchdog();
  std::string summary() const;  // the running configuration in a line, for systemd's STATUS=
  // Tells systemd the service is ready again after a reload that kept the running configuration.
  void reload_refused(std::string_view why);

  boost::asio::io_context& io_;
  std::string config_path_;
  Logging& logging_;
  boost::asio::signal_set signals_;
  boost::asio::steady_timer log_timer_;       // notices a rotated log file
  boost::asio::steady_timer stop_timer_;      // the stop's deadline for waiting on a lock
  boost::asio::steady_timer watchdog_timer_;  // systemd's watchdog pings (readiness.hpp)
  Readiness readiness_ = Readiness::from_environment();
  // Keeps run() going while the writer works and the network side has nothing pending.
  std::optional<boost::asio::executor_work_guard<boost::asio::io_context::executor_type>> busy_;
  std::optional<ServiceLock> lock_;  // one service per database (service_lock.hpp)
  std::optional<Config> config_;     // the running configuration, once the writer has opened it
  std::unique_ptr<Writer> writer_;
  // Shipping to the warehouse, when one is configured: started once the database is open, again
  // after each reload, stopped first when the service stops.
  std::shared_ptr<ShippingBoard> shipping_board_ = std::make_shared<ShippingBoard>();
  std::unique_ptr<Shipping> shipping_;
  // Shippings asked to stop (at a reload or the stop), joined when the service ends: the loop
  // never waits for one.
  std::vector<std::unique_ptr<Shipping>> stopped_shipping_;
  void stop_shipping();
  void start_shipping();
  LiveFiguresSource live_figures() const;
  std::unique_ptr<TcpSources> tcp_;
  std::shared_ptr<HttpServer> http_;
  bool reloading_ = false;
  bool reload_waiting_ = false;  // a SIGHUP came while opening or reloading: reload after it
  bool stopping_ = false;
  int exit_code_ = 0;
};

}  // namespace stagewell::service
