#include "readiness.hpp"

#include <sys/socket.h>
#include <sys/un.h>
#include <unistd.h>

#include <charconv>
#include <cstddef>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <utility>

namespace stagewell::service {
namespace {

std::optional<long long> number(const char* text) {
  if (text == nullptr || *text == '\0') return std::nullopt;
  long long value = 0;
  const char* end = text + std::strlen(text);
  const auto [ptr, ec] = std::from_chars(text, end, value);
  if (ec != std::errc() || ptr != end) return std::nullopt;
  return value;
}

// A status line is one line: the protocol separates assignments by newlines.
std::string one_line(std::string_view text) {
  std::string out(text);
  for (char& c : out) {
    if (c == '\n' || c == '\r') c = ' ';
  }
  return out;
}

}  // namespace

Readiness Readiness::from_environment() {
  Readiness out;
  const char* address = std::getenv("NOTIFY_SOCKET");
  if (address == nullptr || (address[0] != '/' && address[0] != '@') ||
      std::strlen(address) >= sizeof(sockaddr_un::sun_path)) {
    return out;
  }
  out.socket_ = ::socket(AF_UNIX, SOCK_DGRAM | SOCK_CLOEXEC | SOCK_NONBLOCK, 0);
  if (out.socket_ < 0) return out;
  out.address_ = address;
  const auto usec = number(std::getenv("WATCHDOG_USEC"));
  const auto pid = number(std::getenv("WATCHDOG_PID"));
  if (usec && *usec > 0 && (!pid || *pid == ::getpid())) {
    out.watchdog_interval_ = std::chrono::microseconds(*usec / 2);
  }
  return out;
}

Readiness::Readiness(Readiness&& other) noexcept
    : socket_(std::exchange(other.socket_, -1)),
      address_(std::move(other.address_)),
      watchdog_interval_(other.watchdog_interval_) {}

Readiness& Readiness::operator=(Readiness&& other) noexcept {
  if (this != &other) {
    if (socket_ >= 0) ::close(socket_);
    socket_ = std::exchange(other.socket_, -1);
    address_ = std::move(other.address_);
    watchdog_interval_ = other.watchdog_interval_;
  }
  return *this;
}

Readiness::~Readiness() {
  if (socket_ >= 0) ::close(socket_);
}

void Readiness::send(const std::string& message) {
  if (socket_ < 0) return;
  sockaddr_un target{};
  target.sun_family = AF_UNIX;
  std::memcpy(target.sun_path, address_.data(), address_.size());
  if (address_[0] == '@') target.sun_path[0] = '\0';  // the abstract namespace
  const auto length =
      static_cast<socklen_t>(offsetof(sockaddr_un, sun_path) + address_.size());
  // Nothing to do on failure: systemd not listening is not the service's problem.
  (void)::sendto(socket_, message.data(), message.size(), MSG_NOSIGNAL | MSG_DONTWAIT,
                 reinterpret_cast<const sockaddr*>(&target), length);
}

void Readiness::ready(std::string_view status) {
  send("READY=1\nSTATUS=" + one_line(status));
}

void Readiness::reloading(std::string_view status) {
  timespec now{};
  ::clock_gettime(CLOCK_MONOTONIC, &now);
  const long long usec = static_cast<long long>(now.tv_sec) * 1'000'000 + now.tv_nsec / 1000;
  send("RELOADING=1\nMONOTONIC_USEC=" + std::to_string(usec) + "\nSTATUS=" + one_line(status));
}

void Readiness::stopping(std::string_view status) {
  send("STOPPING=1\nSTATUS=" + one_line(status));
}

void Readiness::status(std::string_view status) { send("STATUS=" + one_line(status)); }

void Readiness::watchdog() { send("WATCHDOG=1"); }

}  // namespace stagewell::service
