// Store::backup: SQLite's online backup (sqlite3_backup_*) from a read-only connection that holds
// one read transaction for the whole copy, so that the copy is one committed state of the database
// however much the service writes meanwhile (in WAL mode a reader never waits for the writer, nor
// the writer for it), into a file of its own under a temporary name.
#include <fcntl.h>
#include <fmt/format.h>
#include <sqlite3.h>
#include <unistd.h>

#include <stdio.h>  // renameat2

#include <cerrno>
#include <chrono>
#include <cstring>
#include <thread>

#include "stagewell/store.hpp"
#include "store/sqlite.hpp"

namespace stagewell {
namespace {

namespace fs = std::filesystem;
using sqlite::Connection;

// Pages per backup step: progress at least this often, a few MiB at the default page size.
constexpr int kPagesPerStep = 1024;
// A step that meets a lock (the source's recovery, a checkpoint of the copy) is tried again, this
// many times, a short pause apart, before the backup gives up.
constexpr int kBusyRetries = 200;
constexpr auto kBusyPause = std::chrono::milliseconds(50);

// Makes a rename in `directory` durable (POSIX: the directory's entry is data of the directory).
void sync_directory(const fs::path& directory) {
  const int fd = ::open(directory.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return;
  (void)::fsync(fd);
  ::close(fd);
}

// Removes the partial copy unless released.
struct PartialFile {
  fs::path path;
  bool keep = false;
  ~PartialFile() {
    if (keep) return;
    std::error_code ignored;
    for (const char* suffix : {"", "-journal", "-wal", "-shm"}) {
      fs::remove(fs::path(path.string() + suffix), ignored);
    }
  }
};

}  // namespace

Result<Store::BackupResult> Store::backup(const fs::path& path, const fs::path& destination,
                                          const BackupProgress& progress) {
  std::error_code ec;
  if (!fs::is_regular_file(path, ec)) {
    return fail(ErrorKind::not_found, fmt::format("no database at {}", path.string()));
  }
  if (fs::exists(destination, ec)) {
    return fail(ErrorKind::invalid_argument,
                fmt::format("{} exists; a backup is written to a new file only",
                            destination.string()));
  }
  auto source = Connection::open(path, Connection::Access::read_only);
  if (!source) return std::unexpected(source.error());
  PartialFile partial{fs::path(destination.string() + ".part")};
  fs::remove(partial.path, ec);
  auto copy = Connection::open(partial.path, Connection::Access::read_write_create);
  if (!copy) return std::unexpected(copy.error());

  // One read transaction for the whole copy: every step reads the same committed state.
  if (auto begun = (*source)->exec("BEGIN"); !begun) return std::unexpected(begun.error());
  if (auto read = (*source)->query_int64("SELECT count(*) FROM sqlite_schema"); !read) {
    return std::unexpected(read.error());
  }
  sqlite3_backup* backup = sqlite3_backup_init((*copy)->handle(), "main", (*source)->handle(),
                                               "main");
  if (backup == nullptr) {
    return std::unexpected(sqlite::to_error(sqlite3_errcode((*copy)->handle()),
                                            (*copy)->handle(), "starting the backup"));
  }
  int code = SQLITE_OK;
  int busy = 0;
  while (true) {
    code = sqlite3_backup_step(backup, kPagesPerStep);
    const std::int64_t total = sqlite3_backup_pagecount(backup);
    if (progress) progress(total - sqlite3_backup_remaining(backup), total);
    if (code == SQLITE_DONE) break;
    if (code == SQLITE_OK) continue;
    if ((code == SQLITE_BUSY || code == SQLITE_LOCKED) && ++busy < kBusyRetries) {
      std::this_thread::sleep_for(kBusyPause);
      continue;
    }
    break;
  }
  BackupResult result;
  result.pages = sqlite3_backup_pagecount(backup);
  sqlite3_backup_finish(backup);
  if (code != SQLITE_DONE) {
    return std::unexpected(sqlite::to_error(code, (*copy)->handle(),
                                            fmt::format("copying {}", path.string())));
  }
  (void)(*source)->exec("COMMIT");
  // The copy as one self-contained file: no -wal beside it to lose in a transfer.
  if (auto mode = (*copy)->query_text("PRAGMA journal_mode = DELETE"); !mode) {
    return std::unexpected(mode.error());
  }
  copy->reset();  // closes it: everything is written and synced by SQLite's commit
  result.bytes = static_cast<std::int64_t>(fs::file_size(partial.path, ec));
  // Never over a file that appeared meanwhile.
  if (::renameat2(AT_FDCWD, partial.path.c_str(), AT_FDCWD, destination.c_str(),
                  RENAME_NOREPLACE) != 0) {
    return fail(ErrorKind::io, fmt::format("cannot rename {} to {}: {}", partial.path.string(),
                                           destination.string(), std::strerror(errno)));
  }
  partial.keep = true;
  sync_directory(destination.has_parent_path() ? destination.parent_path() : fs::path("."));
  return result;
}

}  // namespace stagewell
