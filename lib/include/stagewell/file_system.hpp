// What the file sources (file_sources.hpp) need of a file system, behind one small interface so
// that tests can put faults between a source and the real files: a read that fails or comes up
// short, a file renamed, replaced, truncated or removed between two calls.
//
// posix_file_system() is the real one and the sources' default. FileSystemWrapper forwards every
// call to another file system; a test derives from it and overrides the calls it disturbs.
//
// Errors: ErrorKind::not_found when the path names nothing, ErrorKind::io for anything else the
// operating system refuses; each message names the path.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell {

struct FileStatus {
  std::string identity;  // "device:inode": names the file across renames
  std::int64_t size_bytes = 0;
  std::int64_t modified_ms = 0;  // last modification, ms since 1970-01-01T00:00:00Z
  bool regular = false;          // a regular file (not a directory, device, pipe, ...)
};

// A file open for reading. Not thread-safe: one owner.
class ReadableFile {
 public:
  virtual ~ReadableFile() = default;
  // Reads up to `size` bytes at the file position and moves it past them. Returns how many were
  // read: 0 at the end of the file, and possibly fewer than `size` before it.
  virtual Result<std::size_t> read(char* buffer, std::size_t size) = 0;
  // Reads up to `size` bytes at `offset`, leaving the file position where it is. Returns how many
  // were read: 0 at or past the end, and possibly fewer than `size` before it.
  virtual Result<std::size_t> read_at(std::int64_t offset, char* buffer, std::size_t size) = 0;
  // The open file's status: still this file's after its path is renamed, replaced or removed.
  virtual Result<FileStatus> status() = 0;
};

class FileSystem {
 public:
  virtual ~FileSystem() = default;
  virtual Result<std::unique_ptr<ReadableFile>> open_read(const std::filesystem::path& path) = 0;
  // The status of the file `path` names, following symbolic links.
  virtual Result<FileStatus> status(const std::filesystem::path& path) = 0;
  // The names of the entries of `directory`, without "." and "..", in no particular order.
  virtual Result<std::vector<std::string>> list(const std::filesystem::path& directory) = 0;
  // Renames `from` to `to`, replacing a file `to` names.
  virtual Result<void> rename(const std::filesystem::path& from,
                              const std::filesystem::path& to) = 0;
  // Creates `path` and any missing parents; nothing to do when it exists.
  virtual Result<void> create_directories(const std::filesystem::path& path) = 0;
};

// The operating system's file system, through POSIX calls. Holds no state: safe from any thread.
FileSystem& posix_file_system();

// Forwards every call to `target`, which must outlive it.
class FileSystemWrapper : public FileSystem {
 public:
  explicit FileSystemWrapper(FileSystem& target) : target_(target) {}
  FileSystem& target() { return target_; }

  Result<std::unique_ptr<ReadableFile>> open_read(const std::filesystem::path& path) override {
    return target_.open_read(path);
  }
  Result<FileStatus> status(const std::filesystem::path& path) override {
    return target_.status(path);
  }
  Result<std::vector<std::string>> list(const std::filesystem::path& directory) override {
    return target_.list(directory);
  }
  Result<void> rename(const std::filesystem::path& from, const std::filesystem::path& to) override {
    return target_.rename(from, to);
  }
  Result<void> create_directories(const std::filesystem::path& path) override {
    return target_.create_directories(path);
  }

 private:
  FileSystem& target_;
};

}  // namespace stagewell
