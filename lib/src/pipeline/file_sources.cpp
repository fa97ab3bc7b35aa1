#include "stagewell/file_sources.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <spdlog/spdlog.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <vector>

namespace stagewell {
namespace {

namespace fs = std::filesystem;

// errno -> Error, in one place.
std::unexpected<Error> os_error(std::string_view what, const fs::path& path) {
  const int code = errno;
  return fail(code == ENOENT ? ErrorKind::not_found : ErrorKind::io,
              fmt::format("{} {}: {}", what, path.string(), std::strerror(code)));
}

std::string identity_of(const struct stat& status) {
  return fmt::format("{}:{}", static_cast<unsigned long long>(status.st_dev),
                     static_cast<unsigned long long>(status.st_ino));
}

// Reads up to `size` bytes at the current position, retrying on EINTR. 0 at end of file.
Result<std::size_t> read_some(const FileHandle& file, char* buffer, std::size_t size,
                              const fs::path& path) {
  for (;;) {
    const ssize_t n = ::read(file.fd(), buffer, size);
    if (n >= 0) return static_cast<std::size_t>(n);
    if (errno != EINTR) return os_error("cannot read", path);
  }
}

// Feeds bytes [0, offset) of `file` to `reader` for its header and line count, leaving the file
// positioned at `offset`.
Result<void> skip_prefix(const FileHandle& file, std::int64_t offset, StreamReader& reader,
                         const fs::path& path) {
  std::vector<char> buffer(kReadChunkBytes);
  std::int64_t left = offset;
  while (left > 0) {
    const auto want = static_cast<std::size_t>(std::min<std::int64_t>(left, buffer.size()));
    auto n = read_some(file, buffer.data(), want, path);
    if (!n) return std::unexpected(n.error());
    if (*n == 0) break;
    reader.skip({buffer.data(), *n});
    left -= static_cast<std::int64_t>(*n);
  }
  return {};
}

std::string absolute_key(std::string_view kind, const fs::path& path) {
  std::error_code ignored;
  const auto absolute = fs::absolute(path, ignored);
  return fmt::format("{}:{}", kind,
                     (absolute.empty() ? path : absolute).lexically_normal().string());
}

}  // namespace

FileHandle& FileHandle::operator=(FileHandle&& other) noexcept {
  if (this != &other) {
    if (fd_ >= 0) ::close(fd_);
    fd_ = std::exchange(other.fd_, -1);
  }
  return *this;
}

FileHandle::~FileHandle() {
  if (fd_ >= 0) ::close(fd_);
}

Result<FileHandle> FileHandle::open_read(const fs::path& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return os_error("cannot open", path);
  return FileHandle(fd);
}

Result<std::string> file_identity(const FileHandle& file) {
  struct stat status {};
  if (::fstat(file.fd(), &status) != 0) return os_error("cannot stat", "(open file)");
  return identity_of(status);
}

Result<std::string> file_identity(const fs::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) return os_error("cannot stat", path);
  return identity_of(status);
}

// ---- FileReader -------------------------------------------------------------------------------

Result<std::unique_ptr<FileReader>> FileReader::open(const fs::path& path, const SourceSpec& spec,
                                                     std::string source_key, Ingestor& ingestor) {
  std::unique_ptr<FileReader> out(new FileReader());
  out->path_ = path;
  out->source_key_ = std::move(source_key);
  out->ingestor_ = &ingestor;
  auto file = FileHandle::open_read(path);
  if (!file) return std::unexpected(file.error());
  out->file_ = std::move(*file);
  struct stat status {};
  if (::fstat(out->file_.fd(), &status) != 0) return os_error("cannot stat", path);
  if (!S_ISREG(status.st_mode)) {
    return fail(ErrorKind::invalid_argument,
                fmt::format("{} is not a regular file", path.string()));
  }
  out->identity_ = identity_of(status);
  out->size_ = status.st_size;

  auto reader = StreamReader::create(spec, path.string(), ingestor);
  if (!reader) return std::unexpected(reader.error());
  out->reader_ = std::move(*reader);

  auto stored = ingestor.committed_progress(out->source_key_);
  if (!stored) return std::unexpected(stored.error());
  std::int64_t offset = 0;
  if (*stored && (*stored)->file_identity == out->identity_ &&
      (*stored)->byte_offset <= out->size_) {
    offset = (*stored)->byte_offset;
  }
  if (auto skipped = skip_prefix(out->file_, offset, *out->reader_, path); !skipped) {
    return std::unexpected(skipped.error());
  }
  return out;
}

Result<bool> FileReader::step(std::size_t max_bytes) {
  if (finished_) return true;
  std::vector<char> buffer(std::min(max_bytes, kReadChunkBytes));
  std::size_t done = 0;
  bool at_end = false;
  while (done < max_bytes) {
    auto n = read_some(file_, buffer.data(), std::min(buffer.size(), max_bytes - done), path_);
    if (!n) return std::unexpected(n.error());
    if (*n == 0) {
      at_end = true;
      break;
    }
    if (auto fed = reader_->feed({buffer.data(), *n}); !fed) return std::unexpected(fed.error());
    done += *n;
  }
  if (at_end) {
    if (auto last = reader_->finish(); !last) return std::unexpected(last.error());
    finished_ = true;
  }
  auto saved = ingestor_->record_progress(
      source_key_, {identity_, reader_->consumed_bytes(), ingestor_->now_ms()});
  if (!saved) return std::unexpected(saved.error());
  return finished_;
}

// ---- DropFolder -------------------------------------------------------------------------------

DropFolder::DropFolder(SourceSpec spec, Ingestor& ingestor, std::int64_t settle_ms)
    : spec_(std::move(spec)), ingestor_(ingestor), settle_ms_(settle_ms) {}

void DropFolder::reset() { current_.reset(); }

Result<void> DropFolder::finish_current() {
  // The file's last progress must be committed before it leaves the folder: after a crash
  // between the two, the file is found again, its progress says "all read", and it is only moved.
  if (auto committed = ingestor_.commit(); !committed) return committed;
  const fs::path from = current_->path();
  const fs::path done_dir = spec_.path / "done";
  std::error_code error;
  fs::create_directories(done_dir, error);
  if (error) {
    return fail(ErrorKind::io,
                fmt::format("cannot create {}: {}", done_dir.string(), error.message()));
  }
  fs::path to = done_dir / from.filename();
  for (int i = 1; fs::exists(to); ++i) {
    to = done_dir / fmt::format("{}.{}", from.filename().string(), i);
  }
  fs::rename(from, to, error);
  if (error) {
    return fail(ErrorKind::io, fmt::format("cannot move {} to {}: {}", from.string(), to.string(),
                                           error.message()));
  }
  spdlog::info("{}: read to the end ({} lines), moved to {}", from.string(), current_->lines(),
               to.string());
  // The stored progress named the file by device and inode. Once the file in done/ is deleted,
  // its inode may be given to a new file dropped under the same name, which must not then be
  // taken as already read: forget it (committed with the next batch; until then the file in
  // done/ still holds the inode).
  if (auto forgot =
          ingestor_.record_progress(absolute_key("folder", from), {"", 0, ingestor_.now_ms()});
      !forgot) {
    return forgot;
  }
  current_.reset();
  ++files_done_;
  return {};
}

Result<bool> DropFolder::poll(std::size_t max_bytes) {
  if (current_) {
    auto finished = current_->step(max_bytes);
    if (!finished) return std::unexpected(finished.error());
    if (*finished) {
      if (auto moved = finish_current(); !moved) return std::unexpected(moved.error());
    }
    return true;
  }

  std::error_code error;
  std::vector<fs::path> candidates;
  const auto settle_before =
      fs::file_time_type::clock::now() - std::chrono::milliseconds(settle_ms_);
  for (const auto& entry : fs::directory_iterator(spec_.path, error)) {
    const auto file_name = entry.path().filename().string();
    if (file_name.empty() || file_name.front() == '.') continue;
    if (file_name.ends_with(".tmp") || file_name.ends_with(".part")) continue;
    std::error_code entry_error;
    if (!entry.is_regular_file(entry_error)) continue;
    const auto modified = entry.last_write_time(entry_error);
    if (entry_error || modified > settle_before) continue;
    const auto identity =
        fmt::format("{}@{}", entry.path().string(), modified.time_since_epoch().count());
    if (unreadable_.count(identity)) continue;
    candidates.push_back(entry.path());
  }
  if (error) {
    return fail(ErrorKind::io, fmt::format("cannot list drop folder {}: {}", spec_.path.string(),
                                           error.message()));
  }
  if (candidates.empty()) return false;
  std::sort(candidates.begin(), candidates.end());
  const auto& next = candidates.front();
  auto reader = FileReader::open(next, spec_, absolute_key("folder", next), ingestor_);
  if (!reader) {
    if (reader.error().kind == ErrorKind::database) return std::unexpected(reader.error());
    spdlog::warn("{}; left in place and not retried until it changes", reader.error().message);
    std::error_code ignored;
    unreadable_.insert(fmt::format("{}@{}", next.string(),
                                   fs::last_write_time(next, ignored).time_since_epoch().count()));
    return true;
  }
  spdlog::info("{}: reading ({} bytes)", next.string(), (*reader)->size_bytes());
  current_ = std::move(*reader);
  return true;
}

// ---- TailedFile -------------------------------------------------------------------------------

namespace {

// Bytes kept from the end of what was read, to notice a file rewritten under us.
constexpr std::size_t kLastBytesKept = 64;

void keep_last_bytes(std::string& kept, std::string_view chunk) {
  if (chunk.size() >= kLastBytesKept) {
    kept.assign(chunk.substr(chunk.size() - kLastBytesKept));
    return;
  }
  kept.append(chunk);
  if (kept.size() > kLastBytesKept) kept.erase(0, kept.size() - kLastBytesKept);
}

// Reads up to `size` bytes at `offset` without moving the file position; fewer at the end.
Result<std::string> read_at(const FileHandle& file, std::int64_t offset, std::size_t size,
                            const fs::path& path) {
  std::string out(size, '\0');
  std::size_t got = 0;
  while (got < size) {
    const ssize_t n = ::pread(file.fd(), out.data() + got, size - got,
                              static_cast<off_t>(offset + static_cast<std::int64_t>(got)));
    if (n < 0 && errno == EINTR) continue;
    if (n < 0) return os_error("cannot read", path);
    if (n == 0) break;
    got += static_cast<std::size_t>(n);
  }
  out.resize(got);
  return out;
}

// A regular file in `directory` whose identity (device:inode) is `identity`.
std::optional<fs::path> find_by_identity(const fs::path& directory, std::string_view identity) {
  std::error_code error;
  for (fs::directory_iterator it(directory, error), end; !error && it != end; it.increment(error)) {
    struct stat status {};
    if (::stat(it->path().c_str(), &status) != 0 || !S_ISREG(status.st_mode)) continue;
    if (identity_of(status) == identity) return it->path();
  }
  return std::nullopt;
}

}  // namespace

TailedFile::TailedFile(SourceSpec spec, Ingestor& ingestor)
    : spec_(std::move(spec)), source_key_(absolute_key("tail", spec_.path)), ingestor_(ingestor) {}

void TailedFile::reset() {
  file_ = FileHandle();
  file_path_.clear();
  identity_.clear();
  reader_.reset();
  offset_ = 0;
  last_bytes_.clear();
  rotated_quiet_since_ms_.reset();
  rotated_searched_ = false;
}

Result<void> TailedFile::open_at(FileHandle file, const fs::path& path, std::int64_t offset) {
  auto reader = StreamReader::create(spec_, path.string(), ingestor_);
  if (!reader) return std::unexpected(reader.error());
  if (auto skipped = skip_prefix(file, offset, **reader, path); !skipped) return skipped;
  auto identity = file_identity(file);
  if (!identity) return std::unexpected(identity.error());
  const auto kept = std::min<std::int64_t>(offset, kLastBytesKept);
  auto last = read_at(file, offset - kept, static_cast<std::size_t>(kept), path);
  if (!last) return std::unexpected(last.error());
  file_ = std::move(file);
  file_path_ = path;
  identity_ = std::move(*identity);
  reader_ = std::move(*reader);
  offset_ = offset;
  last_bytes_ = std::move(*last);
  return {};
}

Result<void> TailedFile::start(bool resume) {
  std::optional<IngestProgress> stored;
  if (resume) {
    auto progress = ingestor_.committed_progress(source_key_);
    if (!progress) return std::unexpected(progress.error());
    stored = *progress;
  }
  auto file = FileHandle::open_read(spec_.path);
  if (!file && file.error().kind != ErrorKind::not_found) return std::unexpected(file.error());
  struct stat status {};
  std::string at_path;  // identity of the file at the path; empty when there is none
  if (file) {
    if (::fstat(file->fd(), &status) != 0) return os_error("cannot stat", spec_.path);
    if (!S_ISREG(status.st_mode)) {
      return fail(ErrorKind::invalid_argument,
                  fmt::format("{} is not a regular file", spec_.path.string()));
    }
    at_path = identity_of(status);
  }

  if (stored && !stored->file_identity.empty() && stored->file_identity != at_path &&
      !rotated_searched_) {
    // The file being read was rotated while nobody watched (the service was stopped, or its
    // batch failed): if it is still beside the path, read the rest of it first. Searched once
    // per start: while the path is missing, start() runs at every poll.
    rotated_searched_ = true;
    if (auto rotated = find_by_identity(spec_.path.parent_path(), stored->file_identity)) {
      auto old = FileHandle::open_read(*rotated);
      struct stat old_status {};
      if (old && ::fstat(old->fd(), &old_status) == 0 &&
          stored->byte_offset <= old_status.st_size) {
        if (auto opened = open_at(std::move(*old), *rotated, stored->byte_offset); !opened) {
          return opened;
        }
        rotated_quiet_since_ms_ = ingestor_.now_ms();
        spdlog::info("{}: rotated to {} before it was read to its end; reading it from byte {}",
                     spec_.path.string(), rotated->string(), stored->byte_offset);
        return {};
      }
    }
  }

  if (!file) {
    if (!missing_logged_) spdlog::info("{}: not there yet; waiting for it", spec_.path.string());
    missing_logged_ = true;
    return {};
  }
  missing_logged_ = false;
  std::int64_t offset = 0;
  if (stored && stored->file_identity == at_path && stored->byte_offset <= status.st_size) {
    offset = stored->byte_offset;
  }
  if (auto opened = open_at(std::move(*file), spec_.path, offset); !opened) return opened;
  spdlog::info("{}: following from byte {}", spec_.path.string(), offset);
  return {};
}

Result<bool> TailedFile::rewritten(std::int64_t size_bytes) {
  if (size_bytes < offset_) return true;
  if (last_bytes_.empty()) return false;
  const auto kept = static_cast<std::int64_t>(last_bytes_.size());
  auto now = read_at(file_, offset_ - kept, last_bytes_.size(), file_path_);
  if (!now) return std::unexpected(now.error());
  return *now != last_bytes_;
}

Result<void> TailedFile::finish_rotated() {
  // Nothing more will be appended to it: its last line counts even without a newline.
  if (auto last = reader_->finish(); !last) return last;
  // Done with it. The progress now belongs to whatever the path names, read from its start.
  if (auto saved = ingestor_.record_progress(source_key_, {"", 0, ingestor_.now_ms()}); !saved) {
    return saved;
  }
  spdlog::info("{}: the rotated file {} is read to its end ({} lines); following the path anew",
               spec_.path.string(), file_path_.string(), reader_->lines());
  reset();
  return {};
}

Result<bool> TailedFile::poll(std::size_t max_bytes) {
  if (!file_) {
    if (auto started = start(/*resume=*/true); !started) return std::unexpected(started.error());
    if (!file_) return false;
  }
  struct stat status {};
  if (::fstat(file_.fd(), &status) != 0) return os_error("cannot stat", file_path_);
  if (!rotated_quiet_since_ms_) {
    auto changed = rewritten(status.st_size);
    if (!changed) return std::unexpected(changed.error());
    if (*changed) {
      spdlog::warn(
          "{}: truncated or rewritten ({} bytes now, {} were read); reading it again "
          "from the start",
          spec_.path.string(), static_cast<std::int64_t>(status.st_size), offset_);
      reset();
      if (auto started = start(/*resume=*/false); !started) return std::unexpected(started.error());
      if (!file_) return false;
    }
  }

  std::vector<char> buffer(std::min(max_bytes, kReadChunkBytes));
  std::size_t done = 0;
  bool at_end = false;
  while (done < max_bytes) {
    auto n = read_some(file_, buffer.data(), std::min(buffer.size(), max_bytes - done), file_path_);
    if (!n) return std::unexpected(n.error());
    if (*n == 0) {
      at_end = true;
      break;
    }
    if (auto fed = reader_->feed({buffer.data(), *n}); !fed) return std::unexpected(fed.error());
    keep_last_bytes(last_bytes_, {buffer.data(), *n});
    done += *n;
    offset_ += static_cast<std::int64_t>(*n);
  }
  if (done > 0) {
    auto saved = ingestor_.record_progress(
        source_key_, {identity_, reader_->consumed_bytes(), ingestor_.now_ms()});
    if (!saved) return std::unexpected(saved.error());
  }
  if (!at_end) return true;

  // At the end of what we have: does the path still name this file?
  auto now_at_path = file_identity(spec_.path);
  if (now_at_path && *now_at_path == identity_) {
    rotated_quiet_since_ms_.reset();  // (renamed back)
    return false;
  }
  // Rotated (renamed away, replaced or removed). The logger may write to the old file until it
  // reopens the path, so the old file is read on until it has been unchanged for a while.
  const auto now = ingestor_.now_ms();
  if (!rotated_quiet_since_ms_) {
    spdlog::info("{}: rotated; reading the old file until it is unchanged for {} ms",
                 spec_.path.string(), kRotatedQuietMs);
  }
  if (!rotated_quiet_since_ms_ || done > 0) {
    rotated_quiet_since_ms_ = now;
    return false;
  }
  if (now - *rotated_quiet_since_ms_ < kRotatedQuietMs) return false;
  if (auto finished = finish_rotated(); !finished) return std::unexpected(finished.error());
  return true;
}

}  // namespace stagewell
