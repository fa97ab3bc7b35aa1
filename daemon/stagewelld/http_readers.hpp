// The threads that answer HTTP requests: each reads the database over a read-only connection of
// its own (a StatusApi), so that no request waits on the network loop — nor the loop on a request,
// nor a request on another's large answer (a month of readings is some megabytes of JSON). The
// loop hands a request over and gets the answer back on its own io_context.
//
// Thread-safety: answer() may be called from any thread; `done` runs on the loop's io_context.
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <atomic>
#include <boost/asio/io_context.hpp>
#include <boost/asio/thread_pool.hpp>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "stagewell/config.hpp"
#include "stagewell/status_api.hpp"

namespace stagewell::service {

struct HttpQuestion {
  std::string method;
  std::string target;
  std::string accept;  // the Accept field, may be empty
};

class HttpReaders {
 public:
  // `threads` readers over `config`'s database; `live` gives the service's counters (it is called
  // on a reader's thread: it must be thread-safe).
  HttpReaders(boost::asio::io_context& loop, Config config, LiveFiguresSource live,
              std::size_t threads = 2);
  ~HttpReaders();  // waits for the answers in progress (each is bounded)

  void answer(HttpQuestion question, std::function<void(HttpAnswer)> done);

 private:
  // A reader's StatusApi, opened on first use on a reader's thread; null when opening failed.
  std::unique_ptr<StatusApi> borrow(std::string& error);
  void give_back(std::unique_ptr<StatusApi> api);

  boost::asio::io_context& loop_;
  Config config_;
  LiveFiguresSource live_;
  boost::asio::thread_pool pool_;
  std::mutex mutex_;
  std::atomic<bool> damage_logged_{false};        // a damaged database file was logged (once)
  std::vector<std::unique_ptr<StatusApi>> idle_;  // guarded by mutex_
};

}  // namespace stagewell::service
