// systemd's readiness protocol (sd_notify(3)), for a unit of Type=notify: one datagram per state
// change to the AF_UNIX socket named by $NOTIFY_SOCKET (a path, or "@name" in the abstract
// namespace), holding newline-separated KEY=VALUE assignments:
//   READY=1       the database is open and every listener bound (also after a reload)
//   RELOADING=1   a SIGHUP is being handled (with MONOTONIC_USEC, as newer systemd asks)
//   STOPPING=1    a stop began
//   STATUS=...    a short line for `systemctl status`
//   WATCHDOG=1    the loop is alive; sent every half of $WATCHDOG_USEC when that is set (and
//                 $WATCHDOG_PID, if set, is this process)
// Without $NOTIFY_SOCKET (not under systemd) every call does nothing. A send never blocks: a full
// socket buffer drops the message (systemd reads them at once; nothing here waits for it).
#pragma once

#include <chrono>
#include <optional>
#include <string>
#include <string_view>

namespace stagewell::service {

class Readiness {
 public:
  // Reads $NOTIFY_SOCKET, $WATCHDOG_USEC and $WATCHDOG_PID.
  static Readiness from_environment();
  Readiness() = default;
  Readiness(Readiness&& other) noexcept;
  Readiness& operator=(Readiness&& other) noexcept;
  Readiness(const Readiness&) = delete;
  Readiness& operator=(const Readiness&) = delete;
  ~Readiness();

  bool enabled() const { return socket_ >= 0; }
  void ready(std::string_view status);
  void reloading(std::string_view status);
  void stopping(std::string_view status);
  void status(std::string_view status);
  void watchdog();
  // How often to call watchdog(): half the watchdog's timeout; nullopt when none is set.
  std::optional<std::chrono::microseconds> watchdog_interval() const { return watchdog_interval_; }

 private:
  void send(const std::string& message);

  int socket_ = -1;
  std::string address_;  // the socket's name, "@..." for the abstract namespace
  std::optional<std::chrono::microseconds> watchdog_interval_;
};

}  // namespace stagewell::service
