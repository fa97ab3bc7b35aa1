// Logging for the service: spdlog to stderr (journald keeps it under systemd) and, when
// configured, to a file that survives rotation (reopened on SIGHUP and whenever the path stops
// naming the file being written, as after logrotate's rename).
//
// A line is "<time> <level> <text>". When stderr is the journal's stream (JOURNAL_STREAM names
// it), stderr's lines are "<N><level> <text>" instead: N is the syslog priority, which journald
// files the line under (so `journalctl -p warning` finds warnings), and the journal's own time
// stamp replaces ours. The log file keeps the time.
//
// Thread-safety: the service logs from its loop, its writer and its HTTP readers at once. The
// logger is installed once and never replaced; apply() and the reopening change its level
// (atomic in spdlog) and the file behind its file sink (under the sink's own lock), so a line
// being written on another thread is never cut or lost. Call apply() and the reopen functions
// from one thread (the loop).
#pragma once

#include <filesystem>
#include <memory>
#include <optional>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell::service {

class ReopenableFileSink;

class Logging {
 public:
  // Sets up the default logger: stderr only, at `level` ("info" if unknown).
  explicit Logging(const std::string& level = "info");

  // Applies a configuration's `log:` settings (level, file). Returns a message when the file
  // cannot be opened (logging then goes on to stderr only).
  std::optional<std::string> apply(const LogSpec& spec);
  // Reopens the file if it was rotated away. Cheap: one stat().
  void reopen_if_rotated();
  // Reopens the file unconditionally (SIGHUP).
  void reopen();

 private:
  void set_level(const std::string& level);

  std::shared_ptr<ReopenableFileSink> file_sink_;
};

}  // namespace stagewell::service
