#include "logging.hpp"

#include <fmt/format.h>
#include <spdlog/sinks/basic_file_sink.h>
#include <spdlog/sinks/stdout_sinks.h>
#include <spdlog/spdlog.h>
#include <sys/stat.h>

namespace stagewell::service {
namespace {

std::string identity_of(const std::filesystem::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) return "";
  return fmt::format("{}:{}", status.st_dev, status.st_ino);
}

}  // namespace

Logging::Logging(const std::string& level) : level_(level) { install(); }

void Logging::install() {
  std::vector<spdlog::sink_ptr> sinks;
  sinks.push_back(std::make_shared<spdlog::sinks::stderr_sink_mt>());
  if (file_) {
    try {
      sinks.push_back(std::make_shared<spdlog::sinks::basic_file_sink_mt>(file_->string()));
      file_identity_ = identity_of(*file_);
    } catch (const spdlog::spdlog_ex& e) {
      file_.reset();
      file_identity_.clear();
      spdlog::error("cannot open the log file: {}", e.what());
    }
  }
  auto logger = std::make_shared<spdlog::logger>("stagewell", sinks.begin(), sinks.end());
  logger->set_pattern("%Y-%m-%dT%H:%M:%S.%e%z %l %v");
  auto level = spdlog::level::from_str(level_);
  // from_str answers "off" for a name it does not know; an unknown level must not silence logging.
  if (level == spdlog::level::off && level_ != "off") level = spdlog::level::info;
  logger->set_level(level);
  logger->flush_on(spdlog::level::info);
  spdlog::set_default_logger(logger);
}

std::optional<std::string> Logging::apply(const LogSpec& spec) {
  level_ = spec.level;
  file_ = spec.file;
  if (file_) {
    std::error_code ignored;
    std::filesystem::create_directories(file_->parent_path(), ignored);
  }
  install();
  if (spec.file && !file_) return fmt::format("cannot open log file {}", spec.file->string());
  return std::nullopt;
}

void Logging::reopen_if_rotated() {
  if (file_ && identity_of(*file_) != file_identity_) install();
}

void Logging::reopen() { install(); }

}  // namespace stagewell::service
