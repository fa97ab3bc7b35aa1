#include "http_readers.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <boost/asio/post.hpp>

#include "stagewell/timestamp.hpp"

namespace stagewell::service {

namespace asio = boost::asio;

HttpReaders::HttpReaders(asio::io_context& loop, Config config, LiveFiguresSource live,
                         std::size_t threads)
    : loop_(loop), config_(std::move(config)), live_(std::move(live)), pool_(threads) {}

HttpReaders::~HttpReaders() {
  // Requests not yet begun are dropped (their connections are being closed); those in progress
  // finish. The StatusApis close their connections after every reader's thread has ended.
  pool_.stop();
  pool_.join();
}

std::unique_ptr<StatusApi> HttpReaders::borrow(std::string& error) {
  {
    std::lock_guard lock(mutex_);
    if (!idle_.empty()) {
      auto api = std::move(idle_.back());
      idle_.pop_back();
      return api;
    }
  }
  // None idle: this thread's first request (there are never more than one per thread).
  auto api = StatusApi::open(config_, live_);
  if (!api) {
    error = api.error().message;
    return nullptr;
  }
  return std::move(*api);
}

void HttpReaders::give_back(std::unique_ptr<StatusApi> api) {
  std::lock_guard lock(mutex_);
  idle_.push_back(std::move(api));
}

void HttpReaders::answer(HttpQuestion question, std::function<void(HttpAnswer)> done) {
  // `done` holds the connection: it is moved along, never copied, so that the connection is
  // released on the loop's thread, not on a reader's.
  asio::post(pool_, [this, question = std::move(question), done = std::move(done)]() mutable {
    std::string error;
    auto api = borrow(error);
    HttpAnswer answer =
        api ? api->answer(question.method, question.target, question.accept, system_now_ms())
            : json_error(503, fmt::format("the database cannot be read now: {}", error));
    if (api) {
      // A damaged file is said once in the log, with what to do; the client gets its 500.
      if (const auto failure = api->take_store_failure();
          failure && failure->kind == ErrorKind::damaged && !damage_logged_.exchange(true)) {
        spdlog::error("http: {}", failure->message);
      }
      give_back(std::move(api));
    }
    asio::post(loop_, [done = std::move(done), answer = std::move(answer)]() mutable {
      done(std::move(answer));
    });
  });
}

}  // namespace stagewell::service
