// `stagewell ingest`: the daemon's pipeline run once over files, for back-loading history.
// Progress is stored like the daemon's, so an interrupted run resumes where it stopped and a
// finished file is not read twice (unless --again). A file rewritten since, or read now with other
// settings (--site, --columns, --time-zone, --stage-units), is read again from its start, and the
// rejects of its earlier reading give way to this reading's (unless --keep-rejects).
#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <algorithm>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>
#include <set>
#include <string_view>

#include "commands.hpp"
#include "ingest_report.hpp"
#include "output_format.hpp"
#include "progress.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/timestamp.hpp"
#include "stagewell/units.hpp"

namespace stagewell::cli {
namespace {

namespace fs = std::filesystem;

struct IngestOptions {
  std::string config_path;
  std::vector<std::string> paths;
  std::string site;         // every line belongs to this site
  std::string time_zone;    // for timestamps without an offset
  std::string columns;      // "time=NAME,stage=NAME,site=NAME", any of the three
  std::string stage_units;  // the unit the files' stages are written in
  bool again = false;
  bool keep_rejects = false;
  bool quiet = false;
};

// --columns: the header names of the fields, as the configuration's `sources[].columns` with the
// same rules (config/source_keys.cpp); nullopt after saying what is wrong.
std::optional<ColumnNames> parse_columns(const std::string& text, bool fixed_site) {
  ColumnNames names;
  std::set<std::string> given;
  std::string_view rest = text;
  while (!rest.empty()) {
    const auto comma = std::min(rest.find(','), rest.size());
    std::string_view item = rest.substr(0, comma);
    rest.remove_prefix(std::min(comma + 1, rest.size()));
    const auto equals = item.find('=');
    const auto trim = [](std::string_view word) {
      while (!word.empty() && word.front() == ' ') word.remove_prefix(1);
      while (!word.empty() && word.back() == ' ') word.remove_suffix(1);
      return std::string(word);
    };
    const std::string field = trim(item.substr(0, equals));
    const std::string name = equals == std::string_view::npos ? "" : trim(item.substr(equals + 1));
    std::string* into = field == "site"    ? &names.site
                        : field == "time"  ? &names.time
                        : field == "stage" ? &names.stage
                                           : nullptr;
    if (!into || name.empty()) {
      std::cerr << fmt::format(
          "--columns: '{}' is not FIELD=NAME with FIELD one of site, time, stage (e.g. "
          "--columns time=when,stage=level)\n",
          item);
      return std::nullopt;
    }
    if (!given.insert(field).second) {
      std::cerr << fmt::format("--columns: {} is named twice\n", field);
      return std::nullopt;
    }
    *into = name;
  }
  if (fixed_site && given.contains("site")) {
    std::cerr << "--columns: site is not used: with --site, the lines have no site column; "
                 "remove one of the two\n";
    return std::nullopt;
  }
  if (names.time == names.stage) {
    std::cerr << "--columns: the stage column must differ from the time column\n";
    return std::nullopt;
  }
  if (!fixed_site && (names.site == names.time || names.site == names.stage)) {
    std::cerr << "--columns: the site column must differ from the time and stage columns\n";
    return std::nullopt;
  }
  return names;
}

// Everything that decides what a file's lines become: the earlier reading of a file is resumed
// only when it was read with the same (FileReaderOptions::read_as).
std::string read_as(const SourceSpec& spec) {
  return fmt::format("site={}\ncolumns={},{},{}\ntime_zone={}\nstage_units={}\n",
                     spec.site.value_or(""), spec.site ? "" : spec.columns.site, spec.columns.time,
                     spec.columns.stage, spec.time_zone.value_or(""),
                     spec.stage_units ? units::ucum(*spec.stage_units) : "");
}

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
  if (counts.stored > 0) print_caution(std::cout);  // each stored reading carries a discharge
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
  if (!options.columns.empty()) {
    auto columns = parse_columns(options.columns, spec.site.has_value());
    if (!columns) return kUsage;
    spec.columns = *columns;
  }
  if (!options.stage_units.empty()) {
    spec.stage_units = units::parse_length(options.stage_units);
    if (!spec.stage_units) {
      std::cerr << "--stage-units: unknown unit; choose one of " << units::length_choices() << '\n';
      return kUsage;
    }
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
    // Rejects name the file by its absolute path, as its progress does: the same file whichever
    // directory the command runs in, so that a later run can replace them.
    const auto absolute = fs::absolute(path, error).lexically_normal();
    const auto key = "ingest:" + absolute.string();
    FileReport report;
    FileReaderOptions reading;
    reading.read_as = read_as(spec);
    reading.from_start = options.again;
    reading.on_line = [&report](const Line& line, const LineOutcome& outcome) {
      report.add(line, outcome);
    };
    auto reader =
        FileReader::open(absolute, spec, key, **ingestor, posix_file_system(), std::move(reading));
    if (!reader) {
      std::cerr << reader.error().message << '\n';  // it names the file
      exit_code = kInvalidInput;
      continue;
    }
    const FileStart start = (*reader)->start();
    if (start == FileStart::resumed && (*reader)->done_bytes() >= (*reader)->size_bytes()) {
      std::cerr << path << ": already read to its end by an earlier run"
                << " (--again reads it again)\n";
    } else if (start == FileStart::resumed && (*reader)->done_bytes() > 0) {
      std::cerr << fmt::format("{}: resuming at byte {} of {} (--again reads it from the start)\n",
                               path, (*reader)->done_bytes(), (*reader)->size_bytes());
    } else if (start == FileStart::changed) {
      std::cerr << path << ": changed since an earlier run read it (not only appended to); "
                << "reading it again from the start\n";
    } else if (start == FileStart::read_differently) {
      std::cerr << path << ": an earlier run read it with another --site, --columns, --time-zone "
                << "or --stage-units; reading it again from the start\n";
    }
    const bool again = start == FileStart::changed || start == FileStart::read_differently ||
                       start == FileStart::again;
    if (again && !options.keep_rejects) {
      // In the batch of the file's first lines: until they are committed, the earlier rejects
      // stay, and so does the progress that says they belong to a reading of the file.
      auto removed = (*ingestor)->remove_rejects(absolute.string());
      if (!removed) {
        std::cerr << removed.error().message << '\n';
        return kInvalidInput;
      }
      if (*removed > 0) {
        std::cerr << fmt::format(
            "{}: the {} rejected line(s) of its earlier reading give way to this one's "
            "(--keep-rejects keeps them)\n",
            path, *removed);
      }
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
        report.print(std::cerr, path);
        return stop_interrupted(**ingestor, files);
      }
    }
    display.end_line();
    ++files;
    report.print(std::cerr, path);
    if (report.nothing_usable()) exit_code = kInvalidInput;
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
  command->add_option("--columns", options->columns,
                      "Header names of the fields, as sources[].columns: FIELD=NAME[,...] with "
                      "FIELD site, time or stage (e.g. time=when,stage=level)");
  command->add_option("--stage-units", options->stage_units,
                      "Unit the stages are written in, as sources[].stage_units (" +
                          units::length_choices() + "): converted to each site's stage units");
  command->add_flag("--again", options->again,
                    "Read files from the start even if an earlier run finished them");
  command->add_flag("--keep-rejects", options->keep_rejects,
                    "When a file is read again from its start, keep the rejects of its earlier "
                    "reading too (by default this reading's replace them)");
  command->add_flag("-q,--quiet", options->quiet, "No progress display");
  command->footer(
      "Readings already stored (same site, time and stage) are ignored; a different stage for a "
      "stored time is kept in rejects as a conflict; stored readings are never removed. A file "
      "changed since an earlier run, or read with other --site, --columns, --time-zone or "
      "--stage-units, is read again from its start. Rejected lines are summarised on stderr. "
      "Exit status 1 if a file does not exist or could not be read, or if every line of a file "
      "was rejected (the others are still read); 130 (143) when interrupted by SIGINT (SIGTERM) "
      "after committing what was read: run again to resume.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_ingest(*options); }; });
}

}  // namespace stagewell::cli
