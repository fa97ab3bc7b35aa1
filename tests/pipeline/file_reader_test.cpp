// FileReader (`stagewell ingest`, and each file of a drop folder) against an earlier reading of
// the same file: resumed where it stopped when the file only grew, read again from its start when
// it was rewritten (to any length) or is read with other settings; the bytes' fingerprint that
// tells the two apart; and the line observer that the command's summary is built from.
#include <doctest/doctest.h>

#include <filesystem>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "source_test_support.hpp"
#include "stagewell/byte_fingerprint.hpp"
#include "stagewell/file_sources.hpp"
#include "stagewell/stream_reader.hpp"

namespace stagewell::test {
namespace {

namespace fs = std::filesystem;

struct Reading {
  Service& service;
  fs::path path;

  std::unique_ptr<FileReader> open(FileReaderOptions options = {}) {
    auto reader = FileReader::open(path, SourceSpec{}, key_of("ingest", path), *service.ingestor,
                                   posix_file_system(), std::move(options));
    REQUIRE_MESSAGE(reader.has_value(), reader.error().message);
    return std::move(*reader);
  }

  // Reads to the end and commits; `max_bytes` a step.
  void run(FileReader& reader, std::size_t max_bytes = 100) {
    for (int step = 0; step < 100'000; ++step) {
      auto finished = reader.step(max_bytes);
      REQUIRE_MESSAGE(finished.has_value(), finished.error().message);
      if (*finished) break;
    }
    REQUIRE(service.ingestor->commit().has_value());
  }
};

// ---- the fingerprint ---------------------------------------------------------------------------

std::string sample(std::size_t size) {
  std::string out;
  for (std::size_t i = 0; i < size; ++i) out += static_cast<char>('a' + (i * 7 + i / 13) % 26);
  return out;
}

std::uint64_t fingerprint_of(std::string_view bytes) {
  ByteFingerprint print;
  print.add(bytes);
  return print.value();
}

TEST_CASE("fingerprint: the same for the same bytes however they are cut into pieces") {
  const std::string bytes = sample(61);  // not a multiple of the 8 bytes mixed at a time
  const auto whole = fingerprint_of(bytes);
  for (std::size_t first = 0; first <= bytes.size(); ++first) {
    for (std::size_t second = first; second <= bytes.size(); second += 5) {
      ByteFingerprint pieces;
      pieces.add(std::string_view(bytes).substr(0, first));
      pieces.add(std::string_view(bytes).substr(first, second - first));
      pieces.add(std::string_view(bytes).substr(second));
      CAPTURE(first);
      CAPTURE(second);
      CHECK(pieces.value() == whole);
    }
  }
}

TEST_CASE("fingerprint: any one byte changed, the length changed, or bytes swapped, it differs") {
  const std::string bytes = sample(40);
  const auto original = fingerprint_of(bytes);
  for (std::size_t at = 0; at < bytes.size(); ++at) {
    for (int bit = 0; bit < 8; ++bit) {
      std::string changed = bytes;
      changed[at] = static_cast<char>(changed[at] ^ (1 << bit));
      CAPTURE(at);
      CAPTURE(bit);
      CHECK(fingerprint_of(changed) != original);
    }
  }
  CHECK(fingerprint_of(bytes + std::string(1, '\0')) != original);  // a trailing zero byte counts
  CHECK(fingerprint_of(std::string(8, '\0')) != fingerprint_of(std::string(16, '\0')));
  CHECK(fingerprint_of("") != fingerprint_of(std::string(1, '\0')));
  // Whole lines moved: "the same lines in another order" is another file.
  CHECK(fingerprint_of("a,1\nb,2\n") != fingerprint_of("b,2\na,1\n"));
  ByteFingerprint empty;
  CHECK(empty.hex().size() == 16);
}

TEST_CASE("stream reader: the consumed fingerprint is that of the first consumed_bytes() bytes") {
  Service service;
  const Input input = lines(0, 30);
  // A line over the limit in the middle: it is held back while its bytes go by, so consumed
  // bytes lag the fed ones across several chunks.
  const std::string text =
      input.text + "g1," + std::string(300, 'x') + "\n" + lines(30, 5, false).text;
  for (std::size_t chunk : {1u, 7u, 64u, 1000u}) {
    auto reader = StreamReader::create(SourceSpec{}, "s.csv", *service.ingestor, 128);
    REQUIRE(reader.has_value());
    for (std::size_t at = 0; at < text.size(); at += chunk) {
      REQUIRE((*reader)->feed(std::string_view(text).substr(at, chunk)).has_value());
      const auto consumed = static_cast<std::size_t>((*reader)->consumed_bytes());
      CAPTURE(chunk);
      CAPTURE(at);
      CHECK((*reader)->consumed_fingerprint().value() ==
            fingerprint_of(std::string_view(text).substr(0, consumed)));
    }
    REQUIRE((*reader)->finish().has_value());
    CHECK((*reader)->consumed_bytes() == static_cast<std::int64_t>(text.size()));
    CHECK((*reader)->consumed_fingerprint().value() == fingerprint_of(text));
    service.ingestor->reset().value();  // nothing of this pass is kept
  }
}

// ---- an earlier reading ------------------------------------------------------------------------

TEST_CASE("a file that only grew is resumed where the earlier reading stopped") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  const Input first = lines(0, 30);
  write_file(reading.path, first.text);
  auto reader = reading.open();
  CHECK(reader->start() == FileStart::first);
  reading.run(*reader);

  const Input more = lines(30, 20, /*header=*/false);
  {
    std::ofstream append(reading.path, std::ios::binary | std::ios::app);
    append << more.text;
  }
  auto again = reading.open();
  CHECK(again->start() == FileStart::resumed);
  CHECK(again->done_bytes() == static_cast<std::int64_t>(first.text.size()));
  reading.run(*again);
  check_stored_once(service, first + more);  // nothing read twice

  auto finished = reading.open();  // read to its end: nothing left
  CHECK(finished->start() == FileStart::resumed);
  CHECK(finished->done_bytes() == finished->size_bytes());
}

TEST_CASE("a file rewritten to the same size is read again from its start") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  const Input first = lines(0, 30);
  write_file(reading.path, first.text);
  auto reader = reading.open();
  reading.run(*reader);

  // The same length, other readings: every time five hours later ("T00:" becomes "T05:").
  std::string other = first.text;
  for (auto at = other.find("T00:"); at != std::string::npos; at = other.find("T00:", at)) {
    other.replace(at, 4, "T05:");
  }
  REQUIRE(other.size() == first.text.size());
  write_file(reading.path, other);  // in place: the same device and inode
  auto again = reading.open();
  CHECK(again->start() == FileStart::changed);
  CHECK(again->done_bytes() == 0);
  reading.run(*again);
  const auto stored = service.readings();
  CHECK(stored.size() == 2 * first.readings.size());
  for (const auto& [time_ms, stage] : first.readings) {
    CHECK(stored.at(time_ms) == stage);                     // kept
    CHECK(stored.at(time_ms + 5 * 60 * kMinute) == stage);  // and the rewritten file's
  }
}

TEST_CASE("a file rewritten longer, with other first lines, is read again from its start") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  write_file(reading.path, lines(0, 10).text);
  auto reader = reading.open();
  reading.run(*reader);
  const Input longer = lines(200, 40);
  write_file(reading.path, longer.text);
  auto again = reading.open();
  CHECK(again->start() == FileStart::changed);
  CHECK(again->done_bytes() == 0);
  reading.run(*again);
  for (const auto& [time_ms, stage] : longer.readings)
    CHECK(service.readings().at(time_ms) == stage);
}

TEST_CASE("a file replaced by another (another inode) is read from its start") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  write_file(reading.path, lines(0, 10).text);
  auto reader = reading.open();
  reading.run(*reader);
  const fs::path other = service.dir.path() / "b.csv";
  write_file(other, lines(300, 10).text);
  fs::rename(other, reading.path);
  auto again = reading.open();
  CHECK(again->start() == FileStart::changed);
  CHECK(again->done_bytes() == 0);
}

TEST_CASE("the same bytes written again are not read again") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  const Input input = lines(0, 20);
  write_file(reading.path, input.text);
  auto reader = reading.open();
  reading.run(*reader);
  write_file(reading.path, input.text);  // rewritten, unchanged
  auto again = reading.open();
  CHECK(again->start() == FileStart::resumed);
  CHECK(again->done_bytes() == again->size_bytes());
}

TEST_CASE("read with other settings: from the start; with the same: resumed") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  write_file(reading.path, lines(0, 20).text);
  FileReaderOptions options;
  options.read_as = "columns=site,time,stage";
  auto reader = reading.open(options);
  reading.run(*reader);

  options.read_as = "columns=site,time,stage";
  CHECK(reading.open(options)->start() == FileStart::resumed);
  options.read_as = "columns=site,time,level";
  auto other = reading.open(options);
  CHECK(other->start() == FileStart::read_differently);
  CHECK(other->done_bytes() == 0);
  options.from_start = true;  // --again
  options.read_as = "columns=site,time,stage";
  auto forced = reading.open(options);
  CHECK(forced->start() == FileStart::again);
  CHECK(forced->done_bytes() == 0);
}

TEST_CASE("progress stored before fingerprints were kept (identity only) is resumed as before") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  const Input input = lines(0, 20);
  write_file(reading.path, input.text);
  const auto first_line_end = static_cast<std::int64_t>(input.text.find('\n', 20) + 1);
  REQUIRE(service.ingestor
              ->record_progress(key_of("ingest", reading.path),
                                {identity_of(reading.path), first_line_end, kStart})
              .has_value());
  REQUIRE(service.ingestor->commit().has_value());
  auto reader = reading.open();
  CHECK(reader->start() == FileStart::resumed);
  CHECK(reader->done_bytes() == first_line_end);
}

TEST_CASE("the line observer hears what became of every line read") {
  Service service;
  Reading reading{service, service.dir.path() / "a.csv"};
  const Input input = lines(0, 21);  // minutes 3, 10 and 17 are bad stages
  write_file(reading.path, input.text + "g1,2026-05-01T00:00:00Z,9\n");  // a conflict
  std::map<LineOutcome::Kind, int> heard;
  std::vector<std::int64_t> rejected_lines;
  FileReaderOptions options;
  options.on_line = [&](const Line& line, const LineOutcome& outcome) {
    ++heard[outcome.kind];
    if (outcome.kind == LineOutcome::Kind::rejected) rejected_lines.push_back(line.number);
  };
  auto reader = reading.open(std::move(options));
  reading.run(*reader, 37);
  CHECK(heard[LineOutcome::Kind::not_data] == 1);  // the header
  CHECK(heard[LineOutcome::Kind::stored] == static_cast<int>(input.readings.size()));
  CHECK(heard[LineOutcome::Kind::rejected] == 3);
  CHECK(heard[LineOutcome::Kind::conflict] == 1);
  // Line 1 is the header, so minute m is line m + 2.
  CHECK(rejected_lines == std::vector<std::int64_t>{5, 12, 19});
}

}  // namespace
}  // namespace stagewell::test
