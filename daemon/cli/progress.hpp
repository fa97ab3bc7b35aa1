// Long commands (`ingest`, `recompute`): progress on stderr, and stopping cleanly on a signal.
#pragma once

#include <chrono>
#include <cstdint>
#include <string_view>

namespace stagewell::cli {

// A bar on a terminal, redrawn at most every 100 ms; a plain line every 5 s otherwise (logs,
// pipes); nothing when quiet.
class ProgressDisplay {
 public:
  explicit ProgressDisplay(bool quiet);

  // `done` of `total` `unit`s ("bytes", "readings") of the work called `name`; `note` follows
  // ("1234 readings stored"). Shown at once when done reaches total or `last` is set.
  void update(std::string_view name, std::int64_t done, std::int64_t total, std::string_view unit,
              std::string_view note, bool last = false);
  // Ends the bar's line on a terminal.
  void end_line();

 private:
  bool quiet_;
  bool terminal_;
  std::chrono::steady_clock::time_point last_{};
};

// SIGINT and SIGTERM: the first is only noted (see interrupted_by()), so that the command can
// commit what it has and stop; a second ends the process at once.
void catch_interrupts();
// The signal that interrupted the run, 0 while none has.
int interrupted_by();

}  // namespace stagewell::cli
