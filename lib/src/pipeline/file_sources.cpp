#include "stagewell/file_sources.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <algorithm>
#include <string_view>
#include <vector>

#include "stagewell/byte_fingerprint.hpp"
#include "stagewell/timestamp.hpp"

namespace stagewell {
namespace {

namespace fs = std::filesystem;

// Feeds bytes [0, offset) of `file` to `reader` for its header and line count, leaving the file
// positioned at `offset`.
Result<void> skip_prefix(ReadableFile& file, std::int64_t offset, StreamReader& reader) {
  std::vector<char> buffer(kReadChunkBytes);
  std::int64_t left = offset;
  while (left > 0) {
    const auto want = static_cast<std::size_t>(std::min<std::int64_t>(left, buffer.size()));
    auto n = file.read(buffer.data(), want);
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

Result<void> not_regular(const fs::path& path) {
  return fail(ErrorKind::invalid_argument, fmt::format("{} is not a regular file", path.string()));
}

}  // namespace

// ---- FileReader -------------------------------------------------------------------------------

namespace {

// A FileReader's stored identity: "<device:inode> bytes=<fingerprint of the bytes before the
// offset>[ settings=<fingerprint of read_as>]". An identity written before the fingerprints were
// kept has neither: the offset is then trusted as it always was.
struct ReaderIdentity {
  std::string file;      // device:inode
  std::string bytes;     // empty when not stored
  std::string settings;  // empty when not stored
};

ReaderIdentity parse_identity(std::string_view text) {
  ReaderIdentity out;
  std::size_t at = 0;
  bool first = true;
  while (at <= text.size()) {
    const auto end = std::min(text.find(' ', at), text.size());
    const std::string_view word = text.substr(at, end - at);
    if (first) {
      out.file = std::string(word);
      first = false;
    } else if (word.starts_with("bytes=")) {
      out.bytes = std::string(word.substr(6));
    } else if (word.starts_with("settings=")) {
      out.settings = std::string(word.substr(9));
    }
    at = end + 1;
  }
  return out;
}

}  // namespace

Result<void> FileReader::open_file(const SourceSpec& spec, FileSystem& files) {
  auto file = files.open_read(path_);
  if (!file) return std::unexpected(file.error());
  auto status = (*file)->status();
  if (!status) return std::unexpected(status.error());
  if (!status->regular) return not_regular(path_);
  auto reader = StreamReader::create(spec, path_.string(), *ingestor_);
  if (!reader) return std::unexpected(reader.error());
  if (on_line_) (*reader)->set_line_observer(on_line_);
  file_ = std::move(*file);
  identity_ = std::move(status->identity);
  size_ = status->size_bytes;
  reader_ = std::move(*reader);
  return {};
}

Result<std::unique_ptr<FileReader>> FileReader::open(const fs::path& path, const SourceSpec& spec,
                                                     std::string source_key, Ingestor& ingestor,
                                                     FileSystem& files, FileReaderOptions options) {
  std::unique_ptr<FileReader> out(new FileReader());
  out->path_ = path;
  out->source_key_ = std::move(source_key);
  out->ingestor_ = &ingestor;
  out->on_line_ = std::move(options.on_line);
  if (!options.read_as.empty()) {
    ByteFingerprint settings;
    settings.add(options.read_as);
    out->settings_hex_ = settings.hex();
  }
  if (auto opened = out->open_file(spec, files); !opened) return std::unexpected(opened.error());

  auto stored = ingestor.committed_progress(out->source_key_);
  if (!stored) return std::unexpected(stored.error());
  if (!*stored || (*stored)->file_identity.empty()) return out;  // FileStart::first
  if (options.from_start) {
    out->start_ = FileStart::again;
    return out;
  }
  const ReaderIdentity earlier = parse_identity((*stored)->file_identity);
  if (earlier.file != out->identity_ || (*stored)->byte_offset > out->size_) {
    out->start_ = FileStart::changed;
    return out;
  }
  if (!earlier.settings.empty() && !out->settings_hex_.empty() &&
      earlier.settings != out->settings_hex_) {
    out->start_ = FileStart::read_differently;
    return out;
  }
  if (auto skipped = skip_prefix(*out->file_, (*stored)->byte_offset, *out->reader_); !skipped) {
    return std::unexpected(skipped.error());
  }
  if (!earlier.bytes.empty() && earlier.bytes != out->reader_->consumed_fingerprint().hex()) {
    // Rewritten since (the same length or longer): the lines read before are not these.
    out->start_ = FileStart::changed;
    if (auto reopened = out->open_file(spec, files); !reopened) {
      return std::unexpected(reopened.error());
    }
    return out;
  }
  out->start_ = FileStart::resumed;
  return out;
}

Result<bool> FileReader::step(std::size_t max_bytes) {
  if (finished_) return true;
  std::vector<char> buffer(std::min(max_bytes, kReadChunkBytes));
  std::size_t done = 0;
  bool at_end = false;
  while (done < max_bytes) {
    auto n = file_->read(buffer.data(), std::min(buffer.size(), max_bytes - done));
    if (!n) {
      // What was fed before the failed read is in the batch: its progress goes with it, so that
      // a restart does not read it again (its rejects would be kept twice).
      if (done > 0) {
        if (auto saved = save_progress(); !saved) return std::unexpected(saved.error());
      }
      return std::unexpected(n.error());
    }
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
  if (auto saved = save_progress(); !saved) return std::unexpected(saved.error());
  return finished_;
}

Result<void> FileReader::save_progress() {
  std::string identity =
      fmt::format("{} bytes={}", identity_, reader_->consumed_fingerprint().hex());
  if (!settings_hex_.empty()) identity += " settings=" + settings_hex_;
  return ingestor_->record_progress(
      source_key_, {std::move(identity), reader_->consumed_bytes(), ingestor_->now_ms()});
}

// ---- DropFolder -------------------------------------------------------------------------------

DropFolder::DropFolder(SourceSpec spec, Ingestor& ingestor, std::int64_t settle_ms,
                       FileSystem& files)
    : spec_(std::move(spec)), ingestor_(ingestor), settle_ms_(settle_ms), files_(files) {}

void DropFolder::reset() { current_.reset(); }

Result<void> DropFolder::finish_current() {
  // The file's last progress must be committed before it leaves the folder: after a crash
  // between the two, the file is found again, its progress says "all read", and it is only moved.
  if (auto committed = ingestor_.commit(); !committed) return committed;
  const fs::path from = current_->path();
  const fs::path done_dir = spec_.path / "done";
  if (auto made = files_.create_directories(done_dir); !made) return made;
  fs::path to = done_dir / from.filename();
  for (int i = 1;; ++i) {
    auto taken = files_.status(to);
    if (!taken && taken.error().kind == ErrorKind::not_found) break;
    if (!taken) return std::unexpected(taken.error());
    to = done_dir / fmt::format("{}.{}", from.filename().string(), i);
  }
  if (auto moved = files_.rename(from, to); !moved) {
    // Removed by someone else once read: nothing is left to move, and the folder goes on (its
    // lines are stored). Any other failure is retried at the next poll.
    auto there = files_.status(from);
    if (there || there.error().kind != ErrorKind::not_found) return moved;
    spdlog::warn("{}: read to the end ({} lines), then removed before it could be moved",
                 from.string(), current_->lines());
  } else {
    spdlog::info("{}: read to the end ({} lines), moved to {}", from.string(), current_->lines(),
                 to.string());
    ++files_done_;
  }
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

  auto names = files_.list(spec_.path);
  if (!names) {
    return fail(ErrorKind::io, fmt::format("cannot list drop folder {}: {}", spec_.path.string(),
                                           names.error().message));
  }
  // A file, and its modification time: a file that fails to open is not retried until it changes.
  std::vector<std::pair<fs::path, std::int64_t>> candidates;
  const std::int64_t settle_before_ms = system_now_ms() - settle_ms_;
  for (const auto& file_name : *names) {
    if (file_name.empty() || file_name.front() == '.') continue;
    if (file_name.ends_with(".tmp") || file_name.ends_with(".part")) continue;
    const fs::path path = spec_.path / file_name;
    auto status = files_.status(path);
    if (!status || !status->regular || status->modified_ms > settle_before_ms) continue;
    if (unreadable_.count(fmt::format("{}@{}", path.string(), status->modified_ms))) continue;
    candidates.emplace_back(path, status->modified_ms);
  }
  if (candidates.empty()) return false;
  std::sort(candidates.begin(), candidates.end());
  const auto& [next, modified_ms] = candidates.front();
  auto reader = FileReader::open(next, spec_, absolute_key("folder", next), ingestor_, files_);
  if (!reader) {
    if (reader.error().kind == ErrorKind::database) return std::unexpected(reader.error());
    spdlog::warn("{}; left in place and not retried until it changes", reader.error().message);
    unreadable_.insert(fmt::format("{}@{}", next.string(), modified_ms));
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
Result<std::string> read_at(ReadableFile& file, std::int64_t offset, std::size_t size) {
  std::string out(size, '\0');
  std::size_t got = 0;
  while (got < size) {
    auto n = file.read_at(offset + static_cast<std::int64_t>(got), out.data() + got, size - got);
    if (!n) return std::unexpected(n.error());
    if (*n == 0) break;
    got += *n;
  }
  out.resize(got);
  return out;
}

// A regular file in `directory` whose identity (device:inode) is `identity`.
std::optional<fs::path> find_by_identity(FileSystem& files, const fs::path& directory,
                                         std::string_view identity) {
  auto names = files.list(directory);
  if (!names) return std::nullopt;
  for (const auto& name : *names) {
    auto status = files.status(directory / name);
    if (status && status->regular && status->identity == identity) return directory / name;
  }
  return std::nullopt;
}

}  // namespace

TailedFile::TailedFile(SourceSpec spec, Ingestor& ingestor, FileSystem& files)
    : spec_(std::move(spec)),
      source_key_(absolute_key("tail", spec_.path)),
      ingestor_(ingestor),
      files_(files) {}

void TailedFile::reset() {
  file_.reset();
  file_path_.clear();
  identity_.clear();
  reader_.reset();
  offset_ = 0;
  last_bytes_.clear();
  rotated_quiet_since_ms_.reset();
  rotated_searched_ = false;
}

Result<void> TailedFile::open_at(std::unique_ptr<ReadableFile> file, const fs::path& path,
                                 std::int64_t offset) {
  auto reader = StreamReader::create(spec_, path.string(), ingestor_);
  if (!reader) return std::unexpected(reader.error());
  if (auto skipped = skip_prefix(*file, offset, **reader); !skipped) return skipped;
  auto status = file->status();
  if (!status) return std::unexpected(status.error());
  const auto kept = std::min<std::int64_t>(offset, kLastBytesKept);
  auto last = read_at(*file, offset - kept, static_cast<std::size_t>(kept));
  if (!last) return std::unexpected(last.error());
  file_ = std::move(file);
  file_path_ = path;
  identity_ = std::move(status->identity);
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
  auto file = files_.open_read(spec_.path);
  if (!file && file.error().kind != ErrorKind::not_found) return std::unexpected(file.error());
  FileStatus status;  // of the file at the path; its identity is empty when there is none
  if (file) {
    auto opened = (*file)->status();
    if (!opened) return std::unexpected(opened.error());
    if (!opened->regular) return not_regular(spec_.path);
    status = std::move(*opened);
  }
  const std::string& at_path = status.identity;

  if (stored && !stored->file_identity.empty() && stored->file_identity != at_path &&
      !rotated_searched_) {
    // The file being read was rotated while nobody watched (the service was stopped, or its
    // batch failed): if it is still beside the path, read the rest of it first. Searched once
    // per start: while the path is missing, start() runs at every poll.
    rotated_searched_ = true;
    if (auto rotated = find_by_identity(files_, spec_.path.parent_path(), stored->file_identity)) {
      auto old = files_.open_read(*rotated);
      auto old_status = old ? (*old)->status() : Result<FileStatus>(std::unexpected(old.error()));
      if (old_status && stored->byte_offset <= old_status->size_bytes) {
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
  if (stored && stored->file_identity == at_path && stored->byte_offset <= status.size_bytes) {
    offset = stored->byte_offset;
  }
  if (auto opened = open_at(std::move(*file), spec_.path, offset); !opened) return opened;
  spdlog::info("{}: following from byte {}", spec_.path.string(), offset);
  return {};
}

Result<bool> TailedFile::rewritten(std::int64_t size_bytes) {
  if (size_bytes < offset_) return true;
  return last_bytes_moved();
}

Result<bool> TailedFile::last_bytes_moved() {
  if (last_bytes_.empty()) return false;
  const auto kept = static_cast<std::int64_t>(last_bytes_.size());
  auto now = read_at(*file_, offset_ - kept, last_bytes_.size());
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

Result<void> TailedFile::save_progress() {
  return ingestor_.record_progress(source_key_,
                                   {identity_, reader_->consumed_bytes(), ingestor_.now_ms()});
}

Result<void> TailedFile::read_again(std::int64_t size_bytes) {
  spdlog::warn(
      "{}: truncated or rewritten ({} bytes now, {} were read); reading it again from the "
      "start",
      spec_.path.string(), size_bytes, offset_);
  reset();
  return start(/*resume=*/false);
}

Result<bool> TailedFile::poll(std::size_t max_bytes) {
  if (!file_) {
    if (auto started = start(/*resume=*/true); !started) return std::unexpected(started.error());
    if (!file_) return false;
  }
  if (!rotated_quiet_since_ms_) {
    auto status = file_->status();
    if (!status) return std::unexpected(status.error());
    auto changed = rewritten(status->size_bytes);
    if (!changed) return std::unexpected(changed.error());
    if (*changed) {
      if (auto again = read_again(status->size_bytes); !again)
        return std::unexpected(again.error());
      if (!file_) return false;
    }
  }

  std::vector<char> buffer(std::min(max_bytes, kReadChunkBytes));
  std::size_t done = 0;
  bool at_end = false;
  while (done < max_bytes) {
    auto n = file_->read(buffer.data(), std::min(buffer.size(), max_bytes - done));
    if (!n) {
      // What was fed before the failed read is in the batch: its progress goes with it, so that
      // a restart does not read it again (its rejects would be kept twice).
      if (done > 0) {
        if (auto saved = save_progress(); !saved) return std::unexpected(saved.error());
      }
      return std::unexpected(n.error());
    }
    if (*n == 0) {
      at_end = true;
      break;
    }
    // The bytes read follow those read before only if those are still in place: a file truncated
    // and rewritten between two reads would give a line made of pieces of both, and the new
    // file's lines before this offset would never be read. Checked after the read, so that a
    // rewrite at any moment before it is seen.
    if (!rotated_quiet_since_ms_) {
      auto changed = last_bytes_moved();
      if (!changed) return std::unexpected(changed.error());
      if (*changed) {
        if (done > 0) {
          if (auto saved = save_progress(); !saved) return std::unexpected(saved.error());
        }
        auto size = file_->status();
        if (!size) return std::unexpected(size.error());
        if (auto again = read_again(size->size_bytes); !again) {
          return std::unexpected(again.error());
        }
        return true;  // the new file waits
      }
    }
    if (auto fed = reader_->feed({buffer.data(), *n}); !fed) return std::unexpected(fed.error());
    keep_last_bytes(last_bytes_, {buffer.data(), *n});
    done += *n;
    offset_ += static_cast<std::int64_t>(*n);
  }
  if (done > 0) {
    if (auto saved = save_progress(); !saved) return std::unexpected(saved.error());
  }
  if (!at_end) return true;

  // At the end of what we have: does the path still name this file?
  auto now_at_path = files_.status(spec_.path);
  if (now_at_path && now_at_path->identity == identity_) {
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
