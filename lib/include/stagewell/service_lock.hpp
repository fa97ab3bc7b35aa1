// One service per database: `stagewelld` holds an exclusive lock on a small file beside the
// database for as long as it runs, so that a second service started on the same database (with
// the same configuration or another) refuses to start instead of writing beside the first. The
// file holds the holder's process id, for the message.
//
// The command-line programs (`stagewell ingest`, `recompute`) do not take the lock: they may run
// beside the service, which notices their commits (docs/operations.md, "The service").
//
// The lock is flock(2) on "<database>.service-lock": the kernel releases it when the process
// ends however it ends (kill -9 included), so a file left behind by a crash never blocks a start.
// A lock belongs to one open file: a second acquire in the same process fails too.
#pragma once

#include <filesystem>
#include <utility>

#include "stagewell/result.hpp"

namespace stagewell {

class ServiceLock {
 public:
  // "<database>.service-lock".
  static std::filesystem::path path_for(const std::filesystem::path& database);

  // Takes the lock of `database` and writes this process's id into its file. Fails when another
  // process holds it, with a message naming the database and that process's id, or when the
  // file cannot be created (the directory must exist).
  static Result<ServiceLock> acquire(const std::filesystem::path& database);

  ServiceLock(ServiceLock&& other) noexcept
      : fd_(std::exchange(other.fd_, -1)), path_(std::move(other.path_)) {}
  ServiceLock& operator=(ServiceLock&& other) noexcept;
  ServiceLock(const ServiceLock&) = delete;
  ServiceLock& operator=(const ServiceLock&) = delete;
  ~ServiceLock();  // releases the lock (the file stays: removing it would race a new holder)

  const std::filesystem::path& path() const { return path_; }

 private:
  ServiceLock(int fd, std::filesystem::path path) : fd_(fd), path_(std::move(path)) {}
  int fd_ = -1;
  std::filesystem::path path_;
};

}  // namespace stagewell
