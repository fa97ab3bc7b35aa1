#include "progress.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <csignal>
#include <iostream>
#include <string>

namespace stagewell::cli {
namespace {

volatile std::sig_atomic_t g_interrupted = 0;

// signal() and raise() are async-signal-safe.
void on_interrupt(int signal_number) {
  if (g_interrupted != 0) {
    std::signal(signal_number, SIG_DFL);
    std::raise(signal_number);
    return;
  }
  g_interrupted = signal_number;
}

}  // namespace

ProgressDisplay::ProgressDisplay(bool quiet)
    : quiet_(quiet), terminal_(::isatty(STDERR_FILENO) != 0) {}

void ProgressDisplay::update(std::string_view name, std::int64_t done, std::int64_t total,
                             std::string_view unit, std::string_view note, bool last) {
  if (quiet_) return;
  const auto now = std::chrono::steady_clock::now();
  const auto interval = terminal_ ? std::chrono::milliseconds(100) : std::chrono::seconds(5);
  if (now - last_ < interval && done < total && !last) return;
  last_ = now;
  const double fraction = total > 0 ? static_cast<double>(done) / static_cast<double>(total) : 1.0;
  if (terminal_) {
    constexpr int kWidth = 30;
    const int filled = static_cast<int>(fraction * kWidth);
    std::cerr << fmt::format("\r{:<24.24} [{}{}] {:5.1f}%  {}", name, std::string(filled, '#'),
                             std::string(kWidth - filled, '.'), 100.0 * fraction, note)
              << std::flush;
  } else {
    std::cerr << fmt::format("{}: {:.1f}% ({} of {} {}), {}\n", name, 100.0 * fraction, done, total,
                             unit, note);
  }
}

void ProgressDisplay::end_line() {
  if (!quiet_ && terminal_) std::cerr << '\n';
}

void catch_interrupts() {
  std::signal(SIGINT, on_interrupt);
  std::signal(SIGTERM, on_interrupt);
}

int interrupted_by() { return static_cast<int>(g_interrupted); }

}  // namespace stagewell::cli
