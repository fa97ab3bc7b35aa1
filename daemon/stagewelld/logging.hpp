// Logging for the service: spdlog to stderr (journald keeps it under systemd) and, when
// configured, to a file that survives rotation (reopened on SIGHUP and whenever the path stops
// naming the file being written, as after logrotate's rename).
#pragma once

#include <filesystem>
#include <optional>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell::service {

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
  void install();

  std::string level_;
  std::optional<std::filesystem::path> file_;
  std::string file_identity_;
};

}  // namespace stagewell::service
