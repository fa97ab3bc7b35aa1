// Helpers of the file source tests: a file system that injects faults (a FileSystemWrapper), CSV
// input whose readings and rejects are known, and the service's poll, commit and recovery in
// miniature (as daemon/stagewelld/service.cpp does them).
#pragma once

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "../store/raw_connection.hpp"
#include "../store/store_test_support.hpp"
#include "stagewell/config.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/file_system.hpp"
#include "stagewell/ingestor.hpp"

namespace stagewell::test {

namespace fs = std::filesystem;

constexpr std::int64_t kT0 = 1'777'593'600'000;  // 2026-05-01T00:00:00Z (Python datetime)
constexpr std::int64_t kMinute = 60'000;
constexpr std::int64_t kStart = kT0 + 14 * 86'400'000;  // the clock: two weeks later (not future)

// ---- the faults --------------------------------------------------------------------------------

// Faults between the sources and the real files. `before_read` runs before every read() of a file
// opened through it, with the count of reads so far (from 1): it may change the files, and an
// Error it returns fails that read. Reads and reads at an offset return at most `most_bytes`.
class FaultyFiles : public FileSystemWrapper {
 public:
  FaultyFiles() : FileSystemWrapper(posix_file_system()) {}

  std::function<std::optional<Error>(int read)> before_read;
  std::function<void(const fs::path&)> before_open;
  std::size_t most_bytes = kReadChunkBytes;
  int reads = 0;

  Result<std::unique_ptr<ReadableFile>> open_read(const fs::path& path) override;

  // The `n`th read fails (ErrorKind::io); every other read works.
  void fail_read(int n) {
    before_read = [n](int read) {
      return read == n ? std::optional(Error{ErrorKind::io, "injected: cannot read"})
                       : std::nullopt;
    };
  }
};

class FaultyFile final : public ReadableFile {
 public:
  FaultyFile(FaultyFiles& files, std::unique_ptr<ReadableFile> file)
      : files_(files), file_(std::move(file)) {}

  Result<std::size_t> read(char* buffer, std::size_t size) override {
    const int n = ++files_.reads;
    if (files_.before_read) {
      if (auto error = files_.before_read(n)) return std::unexpected(*error);
    }
    return file_->read(buffer, std::min(size, files_.most_bytes));
  }
  Result<std::size_t> read_at(std::int64_t offset, char* buffer, std::size_t size) override {
    return file_->read_at(offset, buffer, std::min(size, files_.most_bytes));
  }
  Result<FileStatus> status() override { return file_->status(); }

 private:
  FaultyFiles& files_;
  std::unique_ptr<ReadableFile> file_;
};

inline Result<std::unique_ptr<ReadableFile>> FaultyFiles::open_read(const fs::path& path) {
  if (before_open) before_open(path);
  auto file = target().open_read(path);
  if (!file) return std::unexpected(file.error());
  return std::make_unique<FaultyFile>(*this, std::move(*file));
}

// ---- the input ---------------------------------------------------------------------------------

// CSV lines of site g1, one reading a minute; every 7th is a bad stage (a reject).
struct Input {
  std::string text;
  std::map<std::int64_t, double> readings;  // time_ms -> stage, for the readings it holds
  std::vector<std::string> rejected;        // the raw lines that are rejects
};

inline Input lines(int first_minute, int count, bool header = true) {
  Input out;
  if (header) out.text = "site,time,stage\n";
  for (int i = 0; i < count; ++i) {
    const int minute = first_minute + i;
    const std::string time = fmt::format("2026-05-01T{:02}:{:02}:00Z", minute / 60, minute % 60);
    if (minute % 7 == 3) {
      const std::string line = "g1," + time + ",no-stage-" + std::to_string(minute);
      out.text += line + "\n";
      out.rejected.push_back(line);
      continue;
    }
    const double stage = 0.3 + 0.001 * (minute % 100);
    out.text += fmt::format("g1,{},{}\n", time, stage);
    out.readings[kT0 + minute * kMinute] = stage;
  }
  return out;
}

inline Input operator+(Input a, const Input& b) {
  a.text += b.text;
  a.readings.insert(b.readings.begin(), b.readings.end());
  a.rejected.insert(a.rejected.end(), b.rejected.begin(), b.rejected.end());
  return a;
}

inline void write_file(const fs::path& path, std::string_view text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
  REQUIRE(out.good());
}

// ---- the service, in miniature -----------------------------------------------------------------

// Two sites, g1 and g2: rectangular, 2 m wide, n 0.014, S 0.001 (as tests/e2e/tcp_support.py),
// and the sources in `sources_yaml` (a `sources:` block), if any.
inline Config config_in(const TempDir& dir, std::string_view sources_yaml = "",
                        double g1_roughness = 0.014) {
  const std::string text =
      "units: metric\ndatabase: " + dir.db().string() + "\n" + std::string(sources_yaml) + R"(sites:
  - id: g1
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: )" + fmt::format("{}", g1_roughness) + R"(
    slope: 0.001
  - id: g2
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
)";
  auto config = parse_config(text, "test.yaml", dir.path());
  REQUIRE_MESSAGE(config.has_value(), config.error().front().to_string());
  return std::move(*config);
}

// A temporary database, an Ingestor on it with a clock the test moves, and the service's way of
// polling, committing and recovering a source.
struct Service {
  TempDir dir;
  Config config;
  std::shared_ptr<std::int64_t> now;
  std::unique_ptr<Ingestor> ingestor;
  std::vector<Error> source_errors;  // what the service would log, per poll
  int dropped_batches = 0;

  explicit Service(std::string_view sources_yaml = "", std::int64_t start_ms = kStart)
      : config(config_in(dir, sources_yaml)), now(std::make_shared<std::int64_t>(start_ms)) {
    auto opened = Ingestor::open(config, IngestorOptions{}, [now = now] { return *now; });
    REQUIRE_MESSAGE(opened.has_value(), opened.error().message);
    ingestor = std::move(*opened);
  }

  // A drop folder (created here) and a followed file, in the temporary directory.
  fs::path folder() const {
    const fs::path path = dir.path() / "in";
    fs::create_directories(path);
    return path;
  }
  fs::path tailed() const { return dir.path() / "logger.csv"; }
  DropFolder drop_folder(FileSystem& files = posix_file_system()) {
    return DropFolder(spec(SourceSpec::Type::directory, folder()), *ingestor, 0, files);
  }
  TailedFile tail(FileSystem& files = posix_file_system()) {
    return TailedFile(spec(SourceSpec::Type::tail, tailed()), *ingestor, files);
  }

  SourceSpec spec(SourceSpec::Type type, const fs::path& path) const {
    SourceSpec out;
    out.type = type;
    out.path = path;
    return out;
  }

  // As after a failure of the store: the batch is dropped and the source re-reads from its
  // committed progress.
  template <typename Source>
  void recover(Source& source) {
    ++dropped_batches;
    REQUIRE(ingestor->reset().has_value());
    source.reset();
  }

  // Polls `source` until a poll fails (a read error injected), commits what is in the batch as
  // the service does after a source's error, then drops the next batch as after a failure of the
  // store, and polls on: the source resumes from its committed progress.
  template <typename Source>
  void fail_commit_drop(Source& source, std::size_t max_bytes) {
    bool failed = false;
    for (int poll = 0; poll < 10 && !failed; ++poll) {
      *now += 500;
      failed = !source.poll(max_bytes).has_value();
    }
    REQUIRE(failed);
    REQUIRE(ingestor->commit().has_value());
    recover(source);
    run(source, max_bytes);
  }

  // Polls `source` as Service::poll() does, `max_bytes` a poll, with the clock moving 500 ms a
  // poll, until it has been idle for `idle_polls` polls in a row (at most `most_polls` polls).
  template <typename Source>
  void run(Source& source, std::size_t max_bytes, int idle_polls = 8, int most_polls = 2000) {
    int idle = 0;
    for (int poll = 0; poll < most_polls && idle < idle_polls; ++poll) {
      *now += 500;
      bool more = false;
      auto polled = source.poll(max_bytes);
      if (!polled) {
        if (polled.error().kind == ErrorKind::database) {
          recover(source);
          continue;
        }
        source_errors.push_back(polled.error());  // logged; the service goes on
      } else {
        more = *polled;
      }
      if (ingestor->commit_due() || !more) {
        if (!ingestor->commit()) {
          recover(source);
          continue;
        }
      }
      idle = more ? 0 : idle + 1;
    }
    REQUIRE(ingestor->commit().has_value());
  }

  // ---- what is stored, as another connection sees it ----

  std::map<std::int64_t, double> readings() {
    auto raw = test::raw_connection(dir.db());
    auto select = raw->prepare("SELECT time_ms, stage FROM readings ORDER BY time_ms");
    REQUIRE(select.has_value());
    std::map<std::int64_t, double> out;
    while (select->step().value()) out[select->column_int64(0)] = select->column_double(1);
    return out;
  }
  std::vector<std::string> rejected() {
    auto raw = test::raw_connection(dir.db());
    auto select = raw->prepare("SELECT raw FROM rejected_lines ORDER BY reject_id");
    REQUIRE(select.has_value());
    std::vector<std::string> out;
    while (select->step().value()) out.push_back(select->column_text(0));
    return out;
  }
  std::optional<IngestProgress> progress(const std::string& key) {
    auto stored = ingestor->committed_progress(key);
    REQUIRE(stored.has_value());
    return *stored;
  }
};

inline std::string key_of(std::string_view kind, const fs::path& path) {
  return std::string(kind) + ":" + fs::absolute(path).lexically_normal().string();
}

inline std::vector<std::string> sorted(std::vector<std::string> lines) {
  std::sort(lines.begin(), lines.end());
  return lines;
}

// Every reading and every reject of `input` stored, each once.
inline void check_stored_once(Service& service, const Input& input) {
  CHECK(service.readings().size() == input.readings.size());
  CHECK(service.rejected().size() == input.rejected.size());
  CHECK(service.readings() == input.readings);
  CHECK(sorted(service.rejected()) == sorted(input.rejected));
}

inline std::string identity_of(const fs::path& path) {
  auto status = posix_file_system().status(path);
  REQUIRE(status.has_value());
  return status->identity;
}

}  // namespace stagewell::test
