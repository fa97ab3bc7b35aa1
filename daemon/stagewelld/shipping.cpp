#include "shipping.hpp"

#include <spdlog/spdlog.h>

#include <algorithm>
#include <chrono>

#include "stagewell/store.hpp"
#include "stagewell/warehouse.hpp"

namespace stagewell::service {
namespace {

using std::chrono::milliseconds;
using std::chrono::seconds;
using Clock = std::chrono::steady_clock;

constexpr auto kIdleLook = seconds(1);        // nothing to ship: look again after this
constexpr auto kFirstRetry = seconds(1);      // the warehouse failed: try again after this...
constexpr auto kLastRetry = seconds(30);      // ...doubling up to this
constexpr auto kProgressEvery = seconds(10);  // while behind: a line in the log this often
constexpr auto kRecount = seconds(10);        // while behind: the lag counted again this often

}  // namespace

Shipping::Shipping(const Config& config, std::shared_ptr<ShippingBoard> board)
    : config_(config), board_(std::move(board)) {
  thread_ = std::thread([this] {
    run();
    finished_ = true;
  });
}

Shipping::~Shipping() { stop(); }

void Shipping::request_stop() {
  {
    std::lock_guard lock(mutex_);
    stopping_ = true;
    if (cancel_) cancel_();
  }
  wake_.notify_all();
}

void Shipping::stop() {
  request_stop();
  if (thread_.joinable()) thread_.join();
}

void Shipping::pause(milliseconds how_long) {
  std::unique_lock lock(mutex_);
  wake_.wait_for(lock, how_long, [this] { return stopping_; });
}

void Shipping::run() {
  const WarehouseSpec& spec = *config_.warehouse;
  auto stop_waits = std::make_shared<std::atomic<bool>>(false);
  StoreOptions options;
  options.lock_wait.cancel = stop_waits;
  auto store = Store::open(config_.database, options);
  if (!store) {
    spdlog::error("warehouse: cannot open the database {} to ship it: {}; not shipping",
                  config_.database.string(), store.error().message);
    return;
  }
  Shipper shipper(spec, *store);
  {
    std::lock_guard lock(mutex_);
    if (stopping_) return;
    cancel_ = [&shipper, stop_waits] {
      stop_waits->store(true);
      shipper.cancel();
    };
  }
  auto stopping = [this] {
    std::lock_guard lock(mutex_);
    return stopping_;
  };
  auto lag = [&store]() -> std::int64_t {
    auto counted = store->shipping().lag_readings();
    return counted ? *counted : 0;
  };
  board_->update([&](WarehouseFigures& f) {
    f.connected = false;
    f.lag_readings = lag();
    if (auto state = store->shipping().state(); state && *state) {
      f.last_shipped_ms = (*state)->last_shipped_ms;
    }
  });

  auto retry = std::chrono::duration_cast<milliseconds>(kFirstRetry);
  std::optional<std::string> failing;  // the failure logged, while it lasts
  bool ever_connected = false;
  auto last_progress = Clock::now();
  auto last_count = Clock::now();
  std::int64_t shipped_since_progress = 0;
  std::int64_t lag_now = 0;

  while (!stopping()) {
    const bool was_connected = shipper.connected();
    auto step = shipper.step();
    if (stopping()) break;
    if (!step) {
      if (failing != step.error().message) {
        spdlog::warn(
            "warehouse: {}; the readings wait here, and are shipped once it answers "
            "(trying again every {} s at most)",
            step.error().message, kLastRetry.count());
        failing = step.error().message;
      }
      const auto waiting = lag();  // from the database: known without the warehouse
      board_->update([&](WarehouseFigures& f) {
        f.connected = false;
        f.lag_readings = waiting;
      });
      pause(retry);
      retry = std::min(retry * 2, std::chrono::duration_cast<milliseconds>(kLastRetry));
      continue;
    }
    retry = std::chrono::duration_cast<milliseconds>(kFirstRetry);
    if (!was_connected) {
      lag_now = lag();
      last_count = Clock::now();
      // What there was to ship when it connected: what is left, and what this step shipped.
      const auto to_ship = lag_now + static_cast<std::int64_t>(step->readings);
      if (step->started_over) {
        spdlog::info(
            "warehouse: shipping to {} as plant '{}' (schema {}), which has nothing "
            "from this database yet: the whole record goes, {} readings",
            shipper.target(), spec.plant, spec.schema, to_ship);
      } else if (failing) {
        spdlog::info("warehouse: {} answers again; {} readings to ship", shipper.target(), to_ship);
      } else if (!ever_connected) {
        spdlog::info("warehouse: shipping to {} as plant '{}' (schema {}); {} readings to ship",
                     shipper.target(), spec.plant, spec.schema, to_ship);
      }
      failing.reset();
      ever_connected = true;
    }
    const auto now = Clock::now();
    shipped_since_progress += static_cast<std::int64_t>(step->readings);
    if (step->idle()) {
      lag_now = 0;
    } else if (now - last_count >= kRecount) {
      lag_now = lag();
      last_count = now;
    } else {
      lag_now = std::max<std::int64_t>(0, lag_now - static_cast<std::int64_t>(step->readings));
    }
    if (now - last_progress >= kProgressEvery) {
      if (shipped_since_progress > 0 && lag_now > 0) {
        const double secs = std::chrono::duration<double>(now - last_progress).count();
        spdlog::info(
            "warehouse: {} readings shipped in {:.0f} s ({:.0f} readings/s); about {} "
            "still to ship",
            shipped_since_progress, secs, static_cast<double>(shipped_since_progress) / secs,
            lag_now);
      }
      last_progress = now;
      shipped_since_progress = 0;
    }
    board_->update([&](WarehouseFigures& f) {
      f.connected = true;
      f.lag_readings = lag_now;
      f.shipped_readings += static_cast<std::int64_t>(step->readings);
      if (step->shipped_ms) f.last_shipped_ms = step->shipped_ms;
    });
    if (step->idle()) pause(std::chrono::duration_cast<milliseconds>(kIdleLook));
  }
  std::lock_guard lock(mutex_);
  cancel_ = nullptr;
}

}  // namespace stagewell::service
