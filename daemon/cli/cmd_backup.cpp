// `stagewell backup`: a consistent copy of the live database, while the service writes to it.
#include <fmt/format.h>

#include <chrono>
#include <filesystem>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "progress.hpp"
#include "stagewell/store.hpp"

namespace stagewell::cli {
namespace {

struct BackupOptions {
  std::string config_path;
  std::string destination;
  bool no_check = false;
  bool quiet = false;
};

int run_backup(const BackupOptions& options) {
  const auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  const auto started = std::chrono::steady_clock::now();
  ProgressDisplay progress(options.quiet);
  const auto copied = Store::backup(
      config->database, options.destination, [&](std::int64_t done, std::int64_t total) {
        progress.update("backup", done, total, "pages", "", done == total);
      });
  progress.end_line();
  if (!copied) {
    std::cerr << "backup failed: " << copied.error().message << '\n';
    return kInvalidInput;
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  std::cout << fmt::format("{} copied to {}: {} pages, {:.1f} MiB, in {:.1f} s\n",
                           config->database.string(), options.destination, copied->pages,
                           static_cast<double>(copied->bytes) / (1024.0 * 1024.0), seconds);
  if (options.no_check) return kOk;
  const auto problems = Store::check_integrity(options.destination);
  if (!problems || !problems->empty()) {
    std::cout << "the copy FAILS SQLite's integrity check: do not rely on it\n";
    if (problems) {
      for (const auto& problem : *problems) std::cout << "  " << problem << '\n';
    } else {
      std::cerr << problems.error().message << '\n';
    }
    return kInvalidInput;
  }
  std::cout << "the copy passes SQLite's integrity check\n";
  return kOk;
}

}  // namespace

void add_backup_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "backup", "Copy the database to a new file, consistently, while the service writes to it");
  auto options = std::make_shared<BackupOptions>();
  add_config_option(*command, options->config_path);
  command->add_option("destination", options->destination, "The copy: a file that does not exist")
      ->required();
  command->add_flag("--no-check", options->no_check,
                    "Skip SQLite's integrity check of the copy (it reads the whole copy)");
  command->add_flag("-q,--quiet", options->quiet, "No progress display");
  command->footer(
      "The copy holds every reading committed when the backup began, as one SQLite file of its "
      "own. Restore: stop the service, move the damaged or old file aside (with its -wal and -shm "
      "files), put the copy in its place, start the service.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_backup(*options); }; });
}

}  // namespace stagewell::cli
