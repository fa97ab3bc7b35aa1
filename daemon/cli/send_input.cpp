#include "send_input.hpp"

#include <unistd.h>

#include <algorithm>
#include <boost/asio/post.hpp>
#include <cerrno>
#include <cstring>
#include <string_view>
#include <vector>

namespace stagewell::cli::send {

void read_input(int fd, const std::shared_ptr<Inbox>& inbox, boost::asio::io_context& io,
                const std::function<void()>& notify) {
  std::string buffer(64 * 1024, '\0');
  std::string line;
  // Beyond kLongestLine a line is sent cut: the service rejects it as too long all the same.
  const auto append = [&line](std::string_view text) {
    line.append(text.substr(0, kLongestLine - std::min(line.size(), kLongestLine)));
  };
  for (bool end = false; !end;) {
    const ssize_t n = ::read(fd, buffer.data(), buffer.size());
    if (n < 0 && errno == EINTR) continue;
    end = n <= 0;
    std::vector<std::string> complete;
    std::string_view rest(buffer.data(), end ? 0 : static_cast<std::size_t>(n));
    for (auto newline = rest.find('\n'); newline != std::string_view::npos;
         newline = rest.find('\n')) {
      append(rest.substr(0, newline));
      if (!line.empty() && line.back() == '\r') line.pop_back();
      complete.push_back(std::exchange(line, {}));
      rest.remove_prefix(newline + 1);
    }
    append(rest);
    if (end && !line.empty()) complete.push_back(std::move(line));
    std::unique_lock lock(inbox->mutex);
    for (auto& text : complete) {
      inbox->space.wait(lock, [&] { return inbox->bytes < kInboxBytes || inbox->abandoned; });
      if (inbox->abandoned) return;
      inbox->bytes += text.size() + 1;
      inbox->lines.push_back(std::move(text));
    }
    if (end) {
      inbox->eof = true;
      inbox->error = n < 0 ? std::strerror(errno) : "";
    }
    if (inbox->abandoned) return;
    lock.unlock();
    boost::asio::post(io, notify);
  }
}

}  // namespace stagewell::cli::send
