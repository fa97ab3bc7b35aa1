// One service per database: the lock beside the database file. The expectations are flock(2)'s
// documented behaviour (Linux man-pages, flock(2): a lock is held by an open file description,
// conflicting LOCK_NB requests fail with EWOULDBLOCK, and it is released when the holder's last
// descriptor closes, which includes the process ending).
#include "stagewell/service_lock.hpp"

#include <doctest/doctest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <fstream>
#include <sstream>
#include <string>

#include "store_test_support.hpp"

namespace stagewell {
namespace {

std::string file_text(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

TEST_CASE("the first service takes the lock and names itself in it") {
  test::TempDir dir;
  auto lock = ServiceLock::acquire(dir.db());
  REQUIRE_MESSAGE(lock.has_value(), lock.error().message);
  CHECK(lock->path() == dir.path() / "stagewell.db.service-lock");
  CHECK(file_text(lock->path()) == std::to_string(::getpid()) + "\n");
}

TEST_CASE("a second acquire is refused with the database and the holder's process id") {
  test::TempDir dir;
  auto first = ServiceLock::acquire(dir.db());
  REQUIRE(first.has_value());
  auto second = ServiceLock::acquire(dir.db());
  REQUIRE_FALSE(second.has_value());
  CHECK(second.error().message.find(dir.db().string()) != std::string::npos);
  CHECK(second.error().message.find("process " + std::to_string(::getpid())) != std::string::npos);
  // The refused attempt must not have overwritten the holder's id.
  CHECK(file_text(first->path()) == std::to_string(::getpid()) + "\n");
}

TEST_CASE("the lock is free again once its holder lets go, and another database is separate") {
  test::TempDir dir;
  {
    auto first = ServiceLock::acquire(dir.db());
    REQUIRE(first.has_value());
    auto other = ServiceLock::acquire(dir.path() / "other.db");
    CHECK(other.has_value());
  }
  auto again = ServiceLock::acquire(dir.db());
  CHECK(again.has_value());
}

TEST_CASE("a lock held by another process names that process; its end frees the lock") {
  test::TempDir dir;
  int to_child[2];
  int from_child[2];
  REQUIRE(::pipe(to_child) == 0);
  REQUIRE(::pipe(from_child) == 0);
  const pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    // The child: take the lock, say so, wait for the word to end without releasing it by hand.
    auto lock = ServiceLock::acquire(dir.db());
    const char said = lock ? 'y' : 'n';
    (void)!::write(from_child[1], &said, 1);
    char ignored;
    (void)!::read(to_child[0], &ignored, 1);
    ::_exit(0);  // no destructors: the kernel must release the lock
  }
  char said = 0;
  REQUIRE(::read(from_child[0], &said, 1) == 1);
  REQUIRE(said == 'y');
  auto refused = ServiceLock::acquire(dir.db());
  REQUIRE_FALSE(refused.has_value());
  CHECK(refused.error().message.find("process " + std::to_string(child)) != std::string::npos);
  const char go = 'x';
  REQUIRE(::write(to_child[1], &go, 1) == 1);
  int status = 0;
  REQUIRE(::waitpid(child, &status, 0) == child);
  auto taken = ServiceLock::acquire(dir.db());
  CHECK(taken.has_value());
  for (int fd : {to_child[0], to_child[1], from_child[0], from_child[1]}) ::close(fd);
}

TEST_CASE("a missing directory is an error naming the lock file") {
  test::TempDir dir;
  auto lock = ServiceLock::acquire(dir.path() / "missing" / "stagewell.db");
  REQUIRE_FALSE(lock.has_value());
  CHECK(lock.error().message.find("missing/stagewell.db.service-lock") != std::string::npos);
}

}  // namespace
}  // namespace stagewell
