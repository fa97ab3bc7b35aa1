// The real file system: POSIX calls, errno turned into an Error here and nowhere else, and the one
// owner of each file descriptor.
#include <dirent.h>
#include <fcntl.h>
#include <fmt/format.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <memory>
#include <string_view>
#include <system_error>
#include <utility>

#include "stagewell/file_system.hpp"

namespace stagewell {
namespace {

namespace fs = std::filesystem;

std::unexpected<Error> os_error(int code, std::string_view what, const fs::path& path) {
  return fail(code == ENOENT ? ErrorKind::not_found : ErrorKind::io,
              fmt::format("{} {}: {}", what, path.string(), std::strerror(code)));
}

std::unexpected<Error> os_error(std::string_view what, const fs::path& path) {
  return os_error(errno, what, path);
}

FileStatus status_of(const struct stat& status) {
  FileStatus out;
  out.identity = fmt::format("{}:{}", static_cast<unsigned long long>(status.st_dev),
                             static_cast<unsigned long long>(status.st_ino));
  out.size_bytes = static_cast<std::int64_t>(status.st_size);
  out.modified_ms = static_cast<std::int64_t>(status.st_mtim.tv_sec) * 1000 +
                    static_cast<std::int64_t>(status.st_mtim.tv_nsec) / 1'000'000;
  out.regular = S_ISREG(status.st_mode);
  return out;
}

// An open file descriptor with one owner.
class FileDescriptor {
 public:
  explicit FileDescriptor(int fd) : fd_(fd) {}
  FileDescriptor(const FileDescriptor&) = delete;
  FileDescriptor& operator=(const FileDescriptor&) = delete;
  ~FileDescriptor() {
    if (fd_ >= 0) ::close(fd_);
  }
  int get() const { return fd_; }

 private:
  int fd_;
};

class PosixFile final : public ReadableFile {
 public:
  PosixFile(int fd, fs::path path) : fd_(fd), path_(std::move(path)) {}

  Result<std::size_t> read(char* buffer, std::size_t size) override {
    for (;;) {
      const ssize_t n = ::read(fd_.get(), buffer, size);
      if (n >= 0) return static_cast<std::size_t>(n);
      if (errno != EINTR) return os_error("cannot read", path_);
    }
  }

  Result<std::size_t> read_at(std::int64_t offset, char* buffer, std::size_t size) override {
    for (;;) {
      const ssize_t n = ::pread(fd_.get(), buffer, size, static_cast<off_t>(offset));
      if (n >= 0) return static_cast<std::size_t>(n);
      if (errno != EINTR) return os_error("cannot read", path_);
    }
  }

  Result<FileStatus> status() override {
    struct stat status {};
    if (::fstat(fd_.get(), &status) != 0) return os_error("cannot stat", path_);
    return status_of(status);
  }

 private:
  FileDescriptor fd_;
  fs::path path_;  // where it was opened, for messages
};

class PosixFileSystem final : public FileSystem {
 public:
  Result<std::unique_ptr<ReadableFile>> open_read(const fs::path& path) override {
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) return os_error("cannot open", path);
    return std::make_unique<PosixFile>(fd, path);
  }

  Result<FileStatus> status(const fs::path& path) override {
    struct stat status {};
    if (::stat(path.c_str(), &status) != 0) return os_error("cannot stat", path);
    return status_of(status);
  }

  Result<std::vector<std::string>> list(const fs::path& directory) override {
    const std::unique_ptr<DIR, int (*)(DIR*)> dir(::opendir(directory.c_str()), ::closedir);
    if (!dir) return os_error("cannot list", directory);
    std::vector<std::string> names;
    errno = 0;
    while (const dirent* entry = ::readdir(dir.get())) {
      const std::string_view name = entry->d_name;
      if (name != "." && name != "..") names.emplace_back(name);
      errno = 0;
    }
    const int code = errno;  // 0 at the end of the listing
    if (code != 0) return os_error(code, "cannot list", directory);
    return names;
  }

  Result<void> rename(const fs::path& from, const fs::path& to) override {
    if (::rename(from.c_str(), to.c_str()) != 0) {
      const int code = errno;
      return fail(
          code == ENOENT ? ErrorKind::not_found : ErrorKind::io,
          fmt::format("cannot move {} to {}: {}", from.string(), to.string(), std::strerror(code)));
    }
    return {};
  }

  Result<void> create_directories(const fs::path& path) override {
    std::error_code error;
    fs::create_directories(path, error);
    if (error) return os_error(error.value(), "cannot create", path);
    return {};
  }
};

}  // namespace

FileSystem& posix_file_system() {
  static PosixFileSystem instance;
  return instance;
}

}  // namespace stagewell
