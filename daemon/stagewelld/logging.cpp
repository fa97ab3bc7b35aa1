#include "logging.hpp"

#include <fmt/format.h>
#include <spdlog/details/file_helper.h>
#include <spdlog/pattern_formatter.h>
#include <spdlog/sinks/base_sink.h>
#include <spdlog/sinks/stdout_sinks.h>
#include <spdlog/spdlog.h>
#include <sys/stat.h>

#include <unistd.h>

#include <cstdlib>
#include <mutex>
#include <string_view>

namespace stagewell::service {
namespace {

std::string identity_of(const std::filesystem::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) return "";
  return fmt::format("{}:{}", status.st_dev, status.st_ino);
}

// True when stderr is the journal's stream: systemd sets JOURNAL_STREAM to "<device>:<inode>" of
// the stream it connects, and a program compares it with its own stderr, so that a child whose
// stderr was redirected elsewhere does not take the journal's format (systemd.exec(5)).
bool stderr_is_journal() {
  const char* stream = std::getenv("JOURNAL_STREAM");
  if (stream == nullptr || *stream == '\0') return false;
  struct stat status {};
  if (::fstat(STDERR_FILENO, &status) != 0) return false;
  return fmt::format("{}:{}", status.st_dev, status.st_ino) == stream;
}

// `%*` in a pattern: the line's syslog priority as journald reads it from the start of a line
// ("<3>" error, "<4>" warning, "<6>" info, "<7>" debug; sd-daemon(3), RFC 5424 severities).
class PriorityFlag final : public spdlog::custom_flag_formatter {
 public:
  void format(const spdlog::details::log_msg& message, const std::tm&,
              spdlog::memory_buf_t& out) override {
    std::string_view prefix = "<6>";
    switch (message.level) {
      case spdlog::level::critical: prefix = "<2>"; break;
      case spdlog::level::err: prefix = "<3>"; break;
      case spdlog::level::warn: prefix = "<4>"; break;
      case spdlog::level::info: prefix = "<6>"; break;
      case spdlog::level::debug:
      case spdlog::level::trace: prefix = "<7>"; break;
      default: break;
    }
    out.append(prefix.data(), prefix.data() + prefix.size());
  }
  std::unique_ptr<custom_flag_formatter> clone() const override {
    return std::make_unique<PriorityFlag>();
  }
};

// Each line's own time and level; the journal's lines carry the priority instead of the time
// (the journal stamps each line itself).
constexpr const char* kPattern = "%Y-%m-%dT%H:%M:%S.%e%z %l %v";
constexpr const char* kJournalPattern = "%*%l %v";

}  // namespace

// A file sink whose file can be changed or reopened while other threads log through it: every
// change takes the sink's lock, which spdlog also takes around each line.
class ReopenableFileSink final : public spdlog::sinks::base_sink<std::mutex> {
 public:
  // Opens `path` for appending (nothing when empty). Returns a message when it cannot.
  std::optional<std::string> open(std::optional<std::filesystem::path> path) {
    std::lock_guard lock(mutex_);
    return open_locked(std::move(path));
  }
  std::optional<std::string> reopen() {
    std::lock_guard lock(mutex_);
    return open_locked(path_);
  }
  void reopen_if_rotated() {
    std::lock_guard lock(mutex_);
    if (path_ && identity_of(*path_) != identity_) open_locked(path_);
  }

 protected:
  void sink_it_(const spdlog::details::log_msg& message) override {
    if (!path_) return;
    spdlog::memory_buf_t formatted;
    formatter_->format(message, formatted);
    file_.write(formatted);
  }
  void flush_() override {
    if (path_) file_.flush();
  }

 private:
  std::optional<std::string> open_locked(std::optional<std::filesystem::path> path) {
    file_.close();
    path_.reset();
    identity_.clear();
    if (!path) return std::nullopt;
    std::error_code ignored;
    std::filesystem::create_directories(path->parent_path(), ignored);
    try {
      file_.open(path->string());
    } catch (const spdlog::spdlog_ex& e) {
      return fmt::format("cannot open log file {}: {}", path->string(), e.what());
    }
    path_ = std::move(path);
    identity_ = identity_of(*path_);
    return std::nullopt;
  }

  spdlog::details::file_helper file_;
  std::optional<std::filesystem::path> path_;  // empty: no file
  std::string identity_;                       // dev:inode of the file open now
};

Logging::Logging(const std::string& level) : file_sink_(std::make_shared<ReopenableFileSink>()) {
  auto stderr_sink = std::make_shared<spdlog::sinks::stderr_sink_mt>();
  if (stderr_is_journal()) {
    auto formatter = std::make_unique<spdlog::pattern_formatter>();
    formatter->add_flag<PriorityFlag>('*').set_pattern(kJournalPattern);
    stderr_sink->set_formatter(std::move(formatter));
  } else {
    stderr_sink->set_pattern(kPattern);
  }
  file_sink_->set_pattern(kPattern);
  std::vector<spdlog::sink_ptr> sinks{stderr_sink, file_sink_};
  auto logger = std::make_shared<spdlog::logger>("stagewell", sinks.begin(), sinks.end());
  logger->flush_on(spdlog::level::info);
  spdlog::set_default_logger(logger);  // before any other thread exists
  set_level(level);
}

void Logging::set_level(const std::string& name) {
  auto level = spdlog::level::from_str(name);
  // from_str answers "off" for a name it does not know; an unknown level must not silence logging.
  if (level == spdlog::level::off && name != "off") level = spdlog::level::info;
  spdlog::default_logger_raw()->set_level(level);
}

std::optional<std::string> Logging::apply(const LogSpec& spec) {
  set_level(spec.level);
  return file_sink_->open(spec.file);
}

void Logging::reopen_if_rotated() { file_sink_->reopen_if_rotated(); }

void Logging::reopen() {
  if (auto problem = file_sink_->reopen()) spdlog::error("{}", *problem);
}

}  // namespace stagewell::service
