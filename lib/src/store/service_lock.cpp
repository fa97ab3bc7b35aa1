#include "stagewell/service_lock.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/file.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <string>

namespace stagewell {
namespace {

// The holder's process id as written in the file; empty when it has not written it yet.
std::string holder_of(int fd) {
  char buffer[32] = {};
  const ssize_t n = ::pread(fd, buffer, sizeof buffer - 1, 0);
  if (n <= 0) return {};
  std::string text(buffer, static_cast<std::size_t>(n));
  while (!text.empty() && (text.back() == '\n' || text.back() == ' ')) text.pop_back();
  return text;
}

}  // namespace

std::filesystem::path ServiceLock::path_for(const std::filesystem::path& database) {
  return database.string() + ".service-lock";
}

Result<ServiceLock> ServiceLock::acquire(const std::filesystem::path& database) {
  const std::filesystem::path path = path_for(database);
  const int fd = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  if (fd < 0) {
    return fail(ErrorKind::io, fmt::format("cannot create the lock file {}: {}", path.string(),
                                           std::strerror(errno)));
  }
  ServiceLock lock(fd, path);  // closes the file on every return below but the last
  int result = 0;
  do {
    result = ::flock(fd, LOCK_EX | LOCK_NB);
  } while (result != 0 && errno == EINTR);
  if (result != 0) {
    if (errno != EWOULDBLOCK) {
      return fail(ErrorKind::io,
                  fmt::format("cannot lock {}: {}", path.string(), std::strerror(errno)));
    }
    const std::string holder = holder_of(fd);
    return fail(ErrorKind::io,
                fmt::format("another stagewelld ({}) is already running on the database {}; one "
                            "service per database (its lock: {})",
                            holder.empty() ? "process id not yet written" : "process " + holder,
                            database.string(), path.string()));
  }
  const std::string pid = fmt::format("{}\n", static_cast<long>(::getpid()));
  if (::ftruncate(fd, 0) != 0 ||
      ::pwrite(fd, pid.data(), pid.size(), 0) != static_cast<ssize_t>(pid.size())) {
    return fail(ErrorKind::io, fmt::format("cannot write to the lock file {}: {}", path.string(),
                                           std::strerror(errno)));
  }
  return lock;
}

ServiceLock& ServiceLock::operator=(ServiceLock&& other) noexcept {
  if (this != &other) {
    if (fd_ >= 0) ::close(fd_);
    fd_ = std::exchange(other.fd_, -1);
    path_ = std::move(other.path_);
  }
  return *this;
}

ServiceLock::~ServiceLock() {
  if (fd_ >= 0) ::close(fd_);  // closing the last descriptor of the file releases the lock
}

}  // namespace stagewell
