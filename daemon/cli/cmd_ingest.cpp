// `stagewell ingest`: the daemon's pipeline run once over files, for back-loading history.
// Progress is stored like the daemon's, so an interrupted run resumes where it stopped and a
// finished file is not read twice (unless --again).
#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <filesystem>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "progress.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell::cli {
namespace {

namespace fs = std::filesystem;

struct IngestOptions {
  std::string config_path;
  std::vector<std::string> paths;
  std::string site;       // every line belongs to this site
  std::string time_zone;  // for timestamps without an offset
  bool again = false;
  bool quiet = false;
};

void print_summary(const IngestCounts& counts, std::int64_t files) {
  std::cout << fmt::format(
      "{} file(s): {} readings stored, {} repeats of stored readings ignored, "
      "{} lines rejected\n",
      files, counts.stored, counts.duplicates, counts.rejected);
  if (!counts.flagged_by_flag.empty()) {
    std::cout << "flagged:\n";
    for (const auto& [flag, count] : counts.flagged_by_flag) {
      std::cout << fmt::format("  {:<18}{:>10}\n", flag, count);
    }
  }
  if (!counts.rejected_by_reason.empty()) {
    std::cout << "rejected (see the `rejects` view for each line and its reason):\n";
    for (const auto& [reason, count] : counts.rejected_by_reason) {
      std::cout << fmt::format("  {:<18}{:>10}\n", reason, count);
    }
  }
}

// After SIGINT or SIGTERM: commit what was read, summarise, and exit with 128 + the signal's
// number (the shell's convention for a process ended by a signal: 130 for Ctrl-C).
int stop_interrupted(Ingestor& ingestor, std::int64_t files) {
  if (auto committed = ingestor.commit(); !committed) {
    std::cerr << "interrupted; the last commit failed (" << committed.error().message
              << "); run again to resume from the commit before it\n";
  } else {
    std::cerr << "interrupted; committed what was read; run again to resume\n";
  }
  print_summary(ingestor.counts(), files);
  return 128 + interrupted_by();
}

int run_ingest(const IngestOptions& options) {
  auto config = load_config_or_report(options.config_path);
  if (!config) return kInvalidInput;
  SourceSpec spec;
  spec.type = SourceSpec::Type::directory;
  if (!options.site.empty()) {
    if (!find_site_or_report(*config, options.site)) return kInvalidInput;
    spec.site = options.site;
  }
  if (!options.time_zone.empty()) {
    if (auto zone = TimeZone::parse(options.time_zone); !zone) {
      std::cerr << "--time-zone: " << zone.error().message << '\n';
      return kUsage;
    }
    spec.time_zone = options.time_zone;
  }
  spdlog::set_level(spdlog::level::warn);  // the summary says what happened

  std::error_code error;
  fs::create_directories(config->database.parent_path(), error);
  auto ingestor = Ingestor::open(*config, IngestorOptions{}, system_now_ms);
  if (!ingestor) {
    std::cerr << "cannot open the database " << config->database.string() << ": "
              << ingestor.error().message << '\n';
    return kInvalidInput;
  }
  // SIGINT or SIGTERM: stop after the current chunk and commit, so the next run resumes.
  catch_interrupts();

  ProgressDisplay display(options.quiet);
  int exit_code = kOk;
  std::int64_t files = 0;
  for (const auto& path : options.paths) {
    const auto key = "ingest:" + fs::absolute(path, error).lexically_normal().string();
    if (options.again) {
      // Forget the stored offset: every line is read again (repeats of stored readings are no-ops).
      if (auto forgot = (*ingestor)->record_progress(key, {"", 0, (*ingestor)->now_ms()});
          !forgot) {
        std::cerr << forgot.error().message << '\n';
        return kInvalidInput;
      }
    }
    auto reader = FileReader::open(path, spec, key, **ingestor);
    if (!reader) {
      std::cerr << reader.error().message << '\n';
      exit_code = kInvalidInput;
      continue;
    }
    if ((*reader)->done_bytes() > 0 && (*reader)->done_bytes() >= (*reader)->size_bytes()) {
      std::cerr << path << ": already read to its end by an earlier run"
                << " (--again reads it again)\n";
    } else if ((*reader)->done_bytes() > 0) {
      std::cerr << fmt::format("{}: resuming at byte {} of {} (--again reads it from the start)\n",
                               path, (*reader)->done_bytes(), (*reader)->size_bytes());
    }
    for (;;) {
      auto finished = (*reader)->step(kReadChunkBytes * 4);
      if (!finished) {
        std::cerr << "\n" << path << ": " << finished.error().message << '\n';
        return kInvalidInput;
      }
      if ((*ingestor)->commit_due() || *finished) {
        if (auto committed = (*ingestor)->commit(); !committed) {
          std::cerr << "\ncommit failed: " << committed.error().message
                    << " (run again to resume from the last commit)\n";
          return kInvalidInput;
        }
      }
      display.update(fs::path(path).filename().string(), (*reader)->done_bytes(),
                     (*reader)->size_bytes(), "bytes",
                     fmt::format("{} readings stored", (*ingestor)->counts().stored));
      if (*finished) break;
      if (interrupted_by() != 0) {
        display.end_line();
        return stop_interrupted(**ingestor, files);
      }
    }
    display.end_line();
    ++files;
    if (interrupted_by() != 0 && &path != &options.paths.back()) {
      return stop_interrupted(**ingestor, files);
    }
  }
  print_summary((*ingestor)->counts(), files);
  return exit_code;
}

}  // namespace

void add_ingest_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "ingest", "Read CSV files of stage readings into the database once (back-loading history)");
  auto options = std::make_shared<IngestOptions>();
  add_config_option(*command, options->config_path);
  // Not CLI::ExistingFile: a file that is missing is a wrong file (exit 1, the others still read),
  // not a wrong command line (exit 2).
  command->add_option("paths", options->paths, "CSV files (header line; site, time, stage columns)")
      ->required();
  command->add_option("-s,--site", options->site,
                      "Every line belongs to this site (the files then need no site column)");
  command->add_option("--time-zone", options->time_zone,
                      "Zone of timestamps written without an offset: IANA name or +HH:MM");
  command->add_flag("--again", options->again,
                    "Read files from the start even if an earlier run finished them");
  command->add_flag("-q,--quiet", options->quiet, "No progress display");
  command->footer(
      "Readings already stored (same site, time and stage) are ignored; a different stage for a "
      "stored time is kept in rejects as a conflict. Exit status 1 if any file could not be read; "
      "130 (143) when interrupted by SIGINT (SIGTERM) after committing what was read: run again "
      "to resume.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_ingest(*options); }; });
}

}  // namespace stagewell::cli
