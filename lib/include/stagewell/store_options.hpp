// How a store connection behaves when another connection holds a lock it needs, and the seam where
// tests inject faults.
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string_view>

namespace stagewell {

// Waiting for a lock another connection holds (another process writing, a checkpoint). Every
// statement of the connection waits this way, whatever it is: SQLite calls the store whenever a
// lock is busy, and the store decides whether to look again.
//
// The callbacks run on the thread that runs the statement, while it waits; they must not use the
// store. The store logs nothing itself: the caller says what to do with these.
struct LockWait {
  // How long one statement waits in all before it fails (ErrorKind::database, "database is
  // locked"), ms; nullopt: as long as it takes. The time counted is the sum of the pauses between
  // looks at the lock, as SQLite's own busy timeout counts it.
  std::optional<std::int64_t> give_up_after_ms = 25'000;
  // Pause between two looks at the lock, ms; at most 50 (more is taken as 50), at least 1.
  std::int64_t poll_ms = 10;
  // Set by any thread to stop waiting: a waiting statement sees it within poll_ms and fails with
  // ErrorKind::cancelled. Statements that find no lock busy are not affected.
  std::shared_ptr<const std::atomic<bool>> cancel;
  // After this long (ms, counted as give_up_after_ms) a wait is reported once to on_waiting...
  std::int64_t notice_after_ms = 1'000;
  std::function<void(std::int64_t waited_ms)> on_waiting;
  // ...and, when the statement then goes ahead, to on_resumed with the whole wait (ms, by the
  // steady clock). A wait that ends in failure is reported by the statement's error instead.
  std::function<void(std::int64_t waited_ms)> on_resumed;
};

struct StoreOptions {
  LockWait lock_wait;
};

// Called before every step of a statement with its SQL text; a SQLite result code returned makes
// that step fail with the code without running it. For tests only: the seam where faults are
// injected ("fail the Nth step"). A busy code is treated as a lock another connection holds: the
// step waits (LockWait) and asks the hook again.
using StepHook = std::function<std::optional<int>(std::string_view sql)>;

}  // namespace stagewell
