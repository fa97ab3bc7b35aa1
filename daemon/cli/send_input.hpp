// `stagewell send`: the input side. One thread reads the input (a file or stdin) into a bounded
// queue of lines; the Asio loop takes them from there (send_client.hpp).
#pragma once

// clang-format off
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later
// clang-format on
#include <boost/asio/io_context.hpp>
#include <condition_variable>
#include <cstddef>
#include <deque>
#include <functional>
#include <memory>
#include <mutex>
#include <string>

namespace stagewell::cli::send {

inline constexpr std::size_t kInboxBytes = 16 << 20;  // bytes read ahead of the window
inline constexpr std::size_t kLongestLine =
    1 << 20;  // bytes kept of a line; the service refuses more

// Lines read by the input thread, waiting for the loop. Bounded: the reader waits when full.
struct Inbox {
  std::mutex mutex;
  std::condition_variable space;
  std::deque<std::string> lines;
  std::size_t bytes = 0;  // of `lines`
  bool eof = false;
  std::string error;       // why reading stopped early
  bool abandoned = false;  // the loop has given up: stop reading
};

// The input thread: lines of `fd` into the inbox, each arrival announced to the loop by `notify`.
void read_input(int fd, const std::shared_ptr<Inbox>& inbox, boost::asio::io_context& io,
                const std::function<void()>& notify);

}  // namespace stagewell::cli::send
