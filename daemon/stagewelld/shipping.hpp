// Shipping to the warehouse (docs/warehouse.md): one thread of its own, with its own connections to
// the database and to PostgreSQL, so that neither ingest nor the network loop ever waits for the
// warehouse. It ships as long as there is something to ship, looks again every second when there
// is not, and when the warehouse cannot be reached it tries again after 1, 2, 4... up to 30 s,
// logging the failure once and the recovery once.
#pragma once

#include <atomic>
#include <condition_variable>
#include <memory>
#include <mutex>
#include <thread>

#include "stagewell/config.hpp"
#include "stagewell/status_api.hpp"

namespace stagewell::service {

// What the metrics show, shared with the HTTP readers; outlives any one Shipping.
class ShippingBoard {
 public:
  WarehouseFigures get() const {
    std::lock_guard lock(mutex_);
    return figures_;
  }
  template <typename Change>
  void update(Change&& change) {
    std::lock_guard lock(mutex_);
    change(figures_);
  }

 private:
  mutable std::mutex mutex_;
  WarehouseFigures figures_;
};

class Shipping {
 public:
  // Starts shipping `config`'s database to its warehouse. REQUIRES: config.warehouse; the database
  // exists at the current schema (the writer opened it).
  Shipping(const Config& config, std::shared_ptr<ShippingBoard> board);
  ~Shipping();  // stop()
  // Asks the thread to end and returns at once: a statement in progress in the warehouse is
  // cancelled (what it had not committed is shipped again next time), and nothing more is
  // shipped. A connection being made may still take up to its timeout (10 s) to give up.
  void request_stop();
  // request_stop(), then waits for the thread to end.
  void stop();
  // The thread has ended (stop() then returns at once).
  bool finished() const { return finished_; }

 private:
  void run();
  void pause(std::chrono::milliseconds how_long);

  Config config_;
  std::shared_ptr<ShippingBoard> board_;
  std::mutex mutex_;
  std::condition_variable wake_;
  bool stopping_ = false;         // guarded by mutex_
  std::function<void()> cancel_;  // guarded by mutex_: cancels the warehouse statement running
  std::atomic<bool> finished_ = false;
  std::thread thread_;
};

}  // namespace stagewell::service
