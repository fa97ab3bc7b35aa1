// The file sources under faults injected between them and the real files (a FileSystemWrapper):
// a read that fails, reads that come up short, a followed file replaced, truncated and rewritten,
// or removed between two reads, a dropped file that vanishes, a batch dropped by the store. The
// sources are polled, committed and recovered as the service does (daemon/stagewelld/service.cpp:
// commit when due or when nothing more waits; after a failure of the store, Ingestor::reset() and
// every source's reset()). Each test works out from its input which readings and rejects must be
// stored, and checks that every one is stored exactly once and that the progress reaches the end.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <algorithm>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>

#include "source_test_support.hpp"

namespace stagewell::test {
namespace {

namespace fs = std::filesystem;

// ---- drop folder -------------------------------------------------------------------------------

TEST_CASE("drop folder: a failed read is retried at the next poll; nothing lost or doubled") {
  Service service;
  const fs::path folder = service.folder();
  const Input input = lines(0, 60);
  write_file(folder / "a.csv", input.text);
  FaultyFiles files;
  files.fail_read(3);
  DropFolder drop = service.drop_folder(files);
  service.run(drop, 256);

  REQUIRE(service.source_errors.size() == 1);  // the one injected
  check_stored_once(service, input);
  CHECK(fs::exists(folder / "done" / "a.csv"));
  CHECK(drop.files_done() == 1);
}

TEST_CASE("drop folder: a failed read, then a dropped batch: resumed from committed progress") {
  Service service;
  const fs::path folder = service.folder();
  const Input input = lines(0, 60);
  write_file(folder / "a.csv", input.text);
  FaultyFiles files;
  files.most_bytes = 100;  // as in the tail case below: the failed read follows one that fed
  files.fail_read(5);
  DropFolder drop = service.drop_folder(files);
  service.fail_commit_drop(drop, 256);
  check_stored_once(service, input);
  CHECK(fs::exists(folder / "done" / "a.csv"));
}

TEST_CASE("drop folder: short reads store the same as whole ones") {
  Service service;
  const fs::path folder = service.folder();
  const Input input = lines(0, 40);
  write_file(folder / "a.csv", input.text);
  FaultyFiles files;
  files.most_bytes = 7;  // lines arrive in pieces, split anywhere
  DropFolder drop = service.drop_folder(files);
  service.run(drop, 100);
  CHECK(service.source_errors.empty());
  check_stored_once(service, input);
  CHECK(fs::exists(folder / "done" / "a.csv"));
}

TEST_CASE("drop folder: a file that vanishes before it is opened is passed over") {
  Service service;
  const fs::path folder = service.folder();
  write_file(folder / "a.csv", lines(0, 10).text);
  const Input second = lines(100, 10);
  write_file(folder / "b.csv", second.text);
  FaultyFiles files;
  files.before_open = [&](const fs::path& path) {
    if (path.filename() == "a.csv") fs::remove(path);  // listed, then gone
  };
  DropFolder drop = service.drop_folder(files);
  service.run(drop, 4096);
  check_stored_once(service, second);
  CHECK(fs::exists(folder / "done" / "b.csv"));
}

TEST_CASE("drop folder: a file removed once read, before it is moved, does not stop the folder") {
  Service service;
  const fs::path folder = service.folder();
  const Input first = lines(0, 10);
  const Input second = lines(100, 10);
  write_file(folder / "a.csv", first.text);
  write_file(folder / "b.csv", second.text);
  FaultyFiles files;
  // a.csv is read whole by the first read (and its end by the second): then it is removed.
  files.before_read = [&](int n) {
    if (n == 2) fs::remove(folder / "a.csv");
    return std::optional<Error>();
  };
  DropFolder drop = service.drop_folder(files);
  service.run(drop, 4096);
  check_stored_once(service, first + second);  // a.csv's lines were read before it went
  CHECK(fs::exists(folder / "done" / "b.csv"));
  // The progress of a.csv is forgotten: a new file under that name is read in full.
  const auto progress = service.progress(key_of("folder", folder / "a.csv"));
  CHECK((!progress || progress->file_identity.empty()));
}

// ---- followed file -----------------------------------------------------------------------------

TEST_CASE("tail: a failed read, then a dropped batch: resumed from the committed progress") {
  Service service;
  const fs::path path = service.tailed();
  const Input input = lines(0, 80);
  write_file(path, input.text);
  FaultyFiles files;
  files.most_bytes = 100;  // 256 bytes a poll: reads of 100, 100 and 56 bytes
  // The second read of the second poll fails, after its first has fed lines (bytes 256-355
  // hold the reject of minute 10).
  files.fail_read(5);
  TailedFile tail = service.tail(files);
  service.fail_commit_drop(tail, 256);

  check_stored_once(service, input);
  const auto progress = service.progress(key_of("tail", path));
  REQUIRE(progress.has_value());
  CHECK(progress->file_identity == identity_of(path));
  CHECK(progress->byte_offset == static_cast<std::int64_t>(input.text.size()));
}

TEST_CASE("tail: short reads store the same as whole ones") {
  Service service;
  const fs::path path = service.tailed();
  const Input input = lines(0, 30);
  write_file(path, input.text);
  FaultyFiles files;
  files.most_bytes = 5;
  TailedFile tail = service.tail(files);
  service.run(tail, 64);
  check_stored_once(service, input);
  CHECK(service.progress(key_of("tail", path))->byte_offset ==
        static_cast<std::int64_t>(input.text.size()));
}

TEST_CASE("tail: a file replaced between two reads is read to its end, then the new one") {
  Service service;
  const fs::path path = service.tailed();
  const Input old_file = lines(0, 40);
  const Input new_file = lines(200, 25);
  write_file(path, old_file.text);
  FaultyFiles files;
  files.before_read = [&](int n) {
    if (n == 3) {  // logrotate's way: renamed away, a new file at the path
      fs::rename(path, path.string() + ".1");
      write_file(path, new_file.text);
    }
    return std::optional<Error>();
  };
  TailedFile tail = service.tail(files);
  service.run(tail, 128);

  check_stored_once(service, old_file + new_file);
  const auto progress = service.progress(key_of("tail", path));
  REQUIRE(progress.has_value());
  CHECK(progress->file_identity == identity_of(path));
  CHECK(progress->byte_offset == static_cast<std::int64_t>(new_file.text.size()));
}

TEST_CASE("tail: truncated and rewritten longer between two reads of one poll") {
  Service service;
  const fs::path path = service.tailed();
  const Input old_file = lines(0, 40);
  // The logger starts its file again: the first 10 lines as before, then others.
  const Input rewritten = lines(0, 10) + lines(300, 60, /*header=*/false);
  REQUIRE(rewritten.text.size() > old_file.text.size());
  write_file(path, old_file.text);
  FaultyFiles files;
  files.most_bytes = 256;  // a poll reads in several pieces: the rewrite lands between two
  files.before_read = [&](int n) {
    if (n == 3) write_file(path, rewritten.text);  // O_TRUNC, then the new text
    return std::optional<Error>();
  };
  TailedFile tail = service.tail(files);
  service.run(tail, 4096);

  // The old file's lines read whole before the rewrite (its first 512 bytes) are stored, then
  // all of the new file, its first lines as repeats; its reject (minute 3) is a line read again,
  // kept again. No line is made of pieces of both files, and none of the new file is skipped.
  const auto old_lines =
      std::count(old_file.text.begin(), old_file.text.begin() + 2 * 256, '\n') - 1;
  check_stored_once(service, lines(0, static_cast<int>(old_lines)) + rewritten);
  CHECK(service.progress(key_of("tail", path))->byte_offset ==
        static_cast<std::int64_t>(rewritten.text.size()));
}

TEST_CASE("tail: truncated between polls and written again: the repeats change nothing") {
  Service service;
  const fs::path path = service.tailed();
  const Input first = lines(0, 30);
  write_file(path, first.text);
  TailedFile tail = service.tail();
  service.run(tail, 4096);
  check_stored_once(service, first);
  const auto duplicates_before = service.ingestor->counts().duplicates;

  // Shorter than what was read: read again from the start.
  const Input again = lines(0, 5) + lines(400, 8, /*header=*/false);
  write_file(path, again.text);
  service.run(tail, 4096);
  check_stored_once(service, first + again);
  // Readings of lines(0, 5) are repeats of stored ones (docs/input.md, "Repeats and conflicts");
  // its reject (minute 3) is a line read again, kept again.
  CHECK(service.ingestor->counts().duplicates - duplicates_before ==
        static_cast<std::int64_t>(lines(0, 5).readings.size()));
}

TEST_CASE("tail: a followed file that vanishes is read to its end; a new one is followed") {
  Service service;
  const fs::path path = service.tailed();
  const Input old_file = lines(0, 40);
  write_file(path, old_file.text);
  FaultyFiles files;
  files.before_read = [&](int n) {
    if (n == 2) fs::remove(path);  // unlinked while open: its data stays readable
    return std::optional<Error>();
  };
  TailedFile tail = service.tail(files);
  service.run(tail, 256);
  check_stored_once(service, old_file);

  const Input new_file = lines(500, 12);
  write_file(path, new_file.text);
  service.run(tail, 256);
  check_stored_once(service, old_file + new_file);
  CHECK(service.progress(key_of("tail", path))->file_identity == identity_of(path));
}

TEST_CASE("tail: a commit that fails drops the batch; the lines are read again, stored once") {
  Service service;
  const fs::path path = service.tailed();
  const Input input = lines(0, 120);
  write_file(path, input.text);
  // The second COMMIT fails: the first batches stored, the next dropped and re-read.
  auto commits = std::make_shared<int>(0);
  service.ingestor->store().set_step_hook_for_testing(
      [commits](std::string_view sql) -> std::optional<int> {
        if (sql.starts_with("COMMIT") && ++*commits == 2) return SQLITE_IOERR;
        return std::nullopt;
      });
  TailedFile tail = service.tail();
  service.run(tail, 512);
  CHECK(service.dropped_batches == 1);
  check_stored_once(service, input);
  CHECK(service.progress(key_of("tail", path))->byte_offset ==
        static_cast<std::int64_t>(input.text.size()));
}

}  // namespace
}  // namespace stagewell::test
