// File sources: a drop folder (each new file read once, then moved to <folder>/done/), a tailed
// file (followed as a logger appends; resumed after a restart; truncation and rotation handled),
// and a single file read to its end (`stagewell ingest`). Each is polled by its owner — the
// daemon's io_context or the ingest command's loop — and does a bounded amount of work per poll,
// so signals and other sources are never starved.
//
// Progress (file identity and byte offset) goes into the same transaction as the readings it
// covers, under the source key "<kind>:<absolute path>". A FileReader's identity also holds a
// fingerprint of the bytes before the offset (and, when its owner gives one, of the settings the
// file is read with), so that a file rewritten since, even to the same size, is read again from
// its start rather than resumed in the middle of other lines.
//
// Every file access goes through a FileSystem (file_system.hpp): the real one unless a test
// passes another, which must outlive the source.
//
// Not thread-safe: each belongs to the thread that polls it.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <optional>
#include <set>
#include <string>

#include "stagewell/file_system.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/stream_reader.hpp"

namespace stagewell {

// Bytes read from a file per read call.
inline constexpr std::size_t kReadChunkBytes = 64 * 1024;

// Where a FileReader begins, and why (FileReader::start()).
enum class FileStart {
  first,    // no earlier reading is stored under the key: from the start
  resumed,  // an earlier reading stopped at done_bytes() (the end, when it finished), and the
            // bytes before it are still those it read
  changed,  // an earlier reading read another file at this path, or bytes since rewritten (not
            // only appended to): from the start
  read_differently,  // an earlier reading read it with other settings (FileReaderOptions::read_as):
                     // from the start
  again,  // an earlier reading is stored, and FileReaderOptions::from_start: from the start
};

struct FileReaderOptions {
  // Names how the file is read (columns, site, time zone, stage units...): a stored progress
  // written with another read_as is not resumed (FileStart::read_differently). Empty: not compared.
  std::string read_as;
  // Read from the start whatever an earlier reading stored (FileStart::again).
  bool from_start = false;
  // Told what became of every line read (StreamReader::set_line_observer).
  StreamReader::LineObserver on_line;
};

// Reads one file from its stored progress to its end. Rejects name the file by `path` as given.
class FileReader {
 public:
  static Result<std::unique_ptr<FileReader>> open(const std::filesystem::path& path,
                                                  const SourceSpec& spec, std::string source_key,
                                                  Ingestor& ingestor,
                                                  FileSystem& files = posix_file_system(),
                                                  FileReaderOptions options = {});
  // Reads and processes up to `max_bytes`; true once the whole file is processed (the final
  // progress is then in the open batch: commit before acting on it).
  Result<bool> step(std::size_t max_bytes);

  std::int64_t size_bytes() const { return size_; }
  std::int64_t done_bytes() const { return reader_->consumed_bytes(); }
  std::int64_t lines() const { return reader_->lines(); }
  const std::filesystem::path& path() const { return path_; }
  FileStart start() const { return start_; }

 private:
  FileReader() = default;
  // Opens the file at path_ (again), and a reader at its start.
  Result<void> open_file(const SourceSpec& spec, FileSystem& files);
  // Stores how far the file is processed, in the open batch.
  Result<void> save_progress();
  std::filesystem::path path_;
  std::string source_key_;
  std::string identity_;      // device:inode
  std::string settings_hex_;  // fingerprint of FileReaderOptions::read_as; empty without one
  StreamReader::LineObserver on_line_;
  FileStart start_ = FileStart::first;
  std::unique_ptr<ReadableFile> file_;
  std::int64_t size_ = 0;
  std::unique_ptr<StreamReader> reader_;
  Ingestor* ingestor_ = nullptr;
  bool finished_ = false;
};

// A folder other programs drop CSV files into. Files whose names start with '.' or end in .tmp
// or .part are being written and are left alone, and so is a file modified within the last
// `settle_ms` (a writer that does not rename).
class DropFolder {
 public:
  DropFolder(SourceSpec spec, Ingestor& ingestor, std::int64_t settle_ms = 2000,
             FileSystem& files = posix_file_system());

  // One poll: continues the file in hand or picks the next; returns true when more work is
  // waiting (poll again soon).
  Result<bool> poll(std::size_t max_bytes);
  // Forgets the file in hand, to be re-read from stored progress (after a failed commit).
  void reset();

  std::int64_t files_done() const { return files_done_; }

 private:
  Result<void> finish_current();

  SourceSpec spec_;
  Ingestor& ingestor_;
  std::int64_t settle_ms_;
  FileSystem& files_;
  std::unique_ptr<FileReader> current_;
  std::set<std::string> unreadable_;  // files that failed to open, not retried until they change
  std::int64_t files_done_ = 0;
};

// How long a rotated-away file must stay unchanged before it counts as finished (ms): a logger
// goes on writing to it until it reopens its path.
inline constexpr std::int64_t kRotatedQuietMs = 2000;

// A file a logger keeps appending to.
//
// Truncation: when the file is shorter than what was read, or the last bytes read are no longer
// where they were (the file was truncated and rewritten longer between two polls, or between two
// reads of one poll), it is read again from the start. Rotation: when the path names another file,
// or none, the old file is still read until it has been unchanged for kRotatedQuietMs, its last
// line counting even without a newline; then the file at the path is read from its start. Restart:
// the stored progress names the file (device:inode) and offset; if the path now names another file,
// a file with the stored identity in the same directory (rotated while the service was stopped) is
// read to its end first. Not noticed: a file truncated and rewritten to at least its old length
// while stopped.
class TailedFile {
 public:
  TailedFile(SourceSpec spec, Ingestor& ingestor, FileSystem& files = posix_file_system());

  // One poll: notices truncation and rotation, then reads up to `max_bytes` of new lines.
  // Returns true when more is waiting.
  Result<bool> poll(std::size_t max_bytes);
  void reset();

 private:
  // Opens the file at the path (or, when `resume` finds one, the rotated file the stored
  // progress belongs to) and skips what is already stored.
  Result<void> start(bool resume);
  Result<void> open_at(std::unique_ptr<ReadableFile> file, const std::filesystem::path& path,
                       std::int64_t offset);
  // True when the file is shorter than offset_ or last_bytes_moved() (truncated or rewritten).
  Result<bool> rewritten(std::int64_t size_bytes);
  // True when the bytes before offset_ are not the ones read.
  Result<bool> last_bytes_moved();
  // The file was truncated or rewritten: it is read again from its start.
  Result<void> read_again(std::int64_t size_bytes);
  // Stores how far the file is processed, in the open batch.
  Result<void> save_progress();
  // The rotated file is finished: its last line is processed and the path is followed anew.
  Result<void> finish_rotated();

  SourceSpec spec_;
  std::string source_key_;
  Ingestor& ingestor_;
  FileSystem& files_;
  std::unique_ptr<ReadableFile> file_;
  std::filesystem::path file_path_;  // where file_ was opened (the path, or a rotated name)
  std::string identity_;
  std::unique_ptr<StreamReader> reader_;
  std::int64_t offset_ = 0;  // bytes of the file fed to reader_
  std::string last_bytes_;   // the last bytes fed (at most 64): to notice a rewrite
  // Set once the path no longer names file_: when file_ last grew (or rotation was noticed), ms.
  std::optional<std::int64_t> rotated_quiet_since_ms_;
  bool rotated_searched_ = false;  // start() looked for a rotated file since the last reset()
  bool missing_logged_ = false;
};

}  // namespace stagewell
