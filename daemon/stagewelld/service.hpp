// The service: one Boost.Asio io_context runs every source, the batch commits and the signals.
//
// Signals set state; the work happens in the loop. SIGTERM or SIGINT: stop taking input, commit
// what is in hand, return (exit 0); a second one ends the process at once (the default action is
// restored after the first). SIGHUP: reopen the log file and reload the configuration, validated
// first; an invalid one is logged and the running one kept. Every few seconds a clock tick lets
// the alarms notice a sensor that has gone quiet.
#pragma once

#include <boost/asio/io_context.hpp>
#include <boost/asio/signal_set.hpp>
#include <boost/asio/steady_timer.hpp>
#include <memory>
#include <optional>
#include <string>
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
#include <vector>

#include "http_server.hpp"  // http
#include "logging.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/recomputation.hpp"
#include "stagewell/service_lock.hpp"
#include "tcp_listener.hpp"  // tcp sources

namespace stagewell::service {

class Service {
 public:
  Service(boost::asio::io_context& io, std::string config_path, Logging& logging);
  ~Service();

  // Loads the configuration and starts everything. Returns false (after logging why) when the
  // configuration or the database cannot be used.
  bool start();
  int exit_code() const { return exit_code_; }

 private:
  struct Source;
  bool open(const Config& config);
  void schedule_poll(bool more_waiting);
  void poll();
  void recover(const Error& error);
  void wait_for_signal();
  void on_signal(int signal_number);
  void reload();
  void shut_down();
  void commit_if_due();        // tcp sources: acknowledge within the batch age
  void schedule_alarm_tick();  // alarms judged by the clock (a sensor gone quiet)
  // Recomputation (recomputation.hpp): after a configuration is loaded, the readings its history or
  // corrections compute differently are recomputed in steps posted between other work.
  void plan_recomputation();
  void post_recompute_step();
  void recompute_step();
  bool open_http();  // http
  void stop_http();  // http

  boost::asio::io_context& io_;
  std::string config_path_;
  Logging& logging_;
  boost::asio::signal_set signals_;
  boost::asio::steady_timer poll_timer_;
  boost::asio::steady_timer alarm_timer_;
  std::optional<ServiceLock> lock_;  // one service per database (service_lock.hpp)
  std::unique_ptr<Ingestor> ingestor_;
  std::vector<std::unique_ptr<Source>> sources_;
  std::unique_ptr<TcpSources> tcp_;  // tcp sources; declared after ingestor_: goes first
  std::vector<std::unique_ptr<Recomputation>> recomputations_;  // sites left to recompute
  bool recompute_posted_ = false;

  // http: the status page, API and metrics; the counts of Ingestors before a reload and
  // the start time, for the metrics.
  std::shared_ptr<HttpServer> http_;
  IngestCounts carried_;
  std::int64_t started_ms_ = 0;
  bool stopping_ = false;
  bool poll_posted_ = false;
  int exit_code_ = 0;
  std::int64_t last_report_ms_ = 0;
  IngestCounts reported_;
};

}  // namespace stagewell::service
