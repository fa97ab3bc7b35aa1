#include "writer.hpp"

#include <spdlog/spdlog.h>

#include <boost/asio/post.hpp>
#include <boost/asio/steady_timer.hpp>
#include <chrono>
#include <filesystem>
#include <variant>
#include <vector>

#include "stagewell/file_sources.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/recomputation.hpp"
#include "stagewell/timestamp.hpp"
#include "tcp_connections.hpp"

namespace stagewell::service {
namespace {

namespace asio = boost::asio;

// Bytes one file source may read per poll before other work (a tcp chunk, a timer) gets its turn.
constexpr std::size_t kBytesPerPoll = 256 * 1024;
// How often sources are polled for new data when none was waiting.
constexpr auto kIdlePoll = std::chrono::milliseconds(200);
// Pause after a failure of the store before reading again: doubled after each failure in a row,
// up to the bound (a full disk is not freed in a second; each attempt reads input again).
constexpr auto kRecoveryPause = std::chrono::seconds(1);
constexpr auto kRecoveryPauseMax = std::chrono::seconds(8);
// How often the alarms judged by the clock (stale sensors) are evaluated. A stale alarm is raised
// at most this long after its `after` has passed.
constexpr auto kAlarmTick = std::chrono::seconds(10);
// How often a line of totals is logged while readings arrive.
constexpr std::int64_t kReportEveryMs = 60'000;
// Readings per recomputation step: one transaction of this many takes some tens of milliseconds,
// so sources and tcp connections wait no longer than that between steps.
constexpr std::int64_t kRecomputeStepReadings = 2000;

std::string summary(const IngestCounts& counts) {
  std::string flagged;
  for (const auto& [flag, count] : counts.flagged_by_flag) {
    flagged += fmt::format("{}{} {}", flagged.empty() ? "" : ", ", count, flag);
  }
  std::string rejected;
  for (const auto& [reason, count] : counts.rejected_by_reason) {
    rejected += fmt::format("{}{} {}", rejected.empty() ? "" : ", ", count, reason);
  }
  return fmt::format("{} readings stored, {} repeats ignored, {} lines rejected{}{}", counts.stored,
                     counts.duplicates, counts.rejected,
                     flagged.empty() ? "" : "; flagged: " + flagged,
                     rejected.empty() ? "" : "; rejected: " + rejected);
}

struct FileSource {
  std::variant<DropFolder, TailedFile> impl;
  std::string label;
  std::string trouble;  // the source's last error, logged once rather than at every poll

  Result<bool> poll(std::size_t max_bytes) {
    return std::visit([&](auto& source) { return source.poll(max_bytes); }, impl);
  }
  void reset() {
    std::visit([](auto& source) { source.reset(); }, impl);
  }
};

}  // namespace

// Everything the writer's thread owns. Every member runs on that thread.
class WriterCore {
 public:
  WriterCore(Writer& owner, asio::io_context& io)
      : owner_(owner), io_(io), poll_timer_(io), alarm_timer_(io), commit_timer_(io) {}

  // The schema version of the database opened.
  Result<int> open(const Config& config);
  // Commits what is in hand and closes the running configuration, telling each tcp connection
  // `tcp_reason`. Returns false when the final commit failed for another reason than a stop.
  bool close(std::string_view tcp_reason);
  int stop();
  const Config* config() const { return ingestor_ ? &ingestor_->config() : nullptr; }
  // What every configuration opened so far has done, as one line for the log.
  std::string totals() const {
    IngestCounts counts = carried_;
    if (ingestor_) counts.add(ingestor_->counts());
    return summary(counts);
  }

  void connect(TcpLink link);
  void feed(std::uint64_t id, const std::string& bytes);
  void finish(std::uint64_t id);
  void disconnect(std::uint64_t id);

 private:
  void schedule_poll(bool more_waiting);
  void poll();
  // Commits the open batch (if any); on failure recovers. False when it failed.
  bool commit();
  void commit_if_due();
  void arm_commit_timer();
  void recover(const Error& error);
  void schedule_alarm_tick();
  void plan_recomputation();
  void post_recompute_step();
  void recompute_step();
  void after_commit();
  void store_works();  // a commit succeeded: ends a run of failures, saying so once
  bool usable() const { return ingestor_ && !stopping_; }

  Writer& owner_;
  asio::io_context& io_;
  asio::steady_timer poll_timer_;
  asio::steady_timer alarm_timer_;
  asio::steady_timer commit_timer_;  // commits a batch that has reached its age
  std::unique_ptr<Ingestor> ingestor_;
  std::vector<std::unique_ptr<FileSource>> sources_;
  std::unique_ptr<TcpConnections> tcp_;  // declared after ingestor_: goes first
  std::vector<std::unique_ptr<Recomputation>> recomputations_;  // sites left to recompute
  IngestCounts carried_;  // counts of the Ingestors before a reload
  IngestCounts reported_;
  std::int64_t last_report_ms_ = 0;
  std::uint64_t generation_ = 0;  // raised at each close: handlers of an older one do nothing
  bool poll_posted_ = false;
  bool recompute_posted_ = false;
  bool commit_timer_armed_ = false;
  bool stopping_ = false;
  bool damage_logged_ = false;  // the database file was found damaged, and the log says so
  // While the store fails: since when (0: it does not), attempts, and the pause before the next.
  std::int64_t failing_since_ms_ = 0;
  std::int64_t failed_attempts_ = 0;
  std::chrono::steady_clock::duration recovery_pause_ = kRecoveryPause;
};

// ---- opening and closing ----------------------------------------------------------------------

Result<int> WriterCore::open(const Config& config) {
  IngestorOptions options;
  // The writer waits for another process's lock as long as it takes, so that nothing is dropped
  // and read again for it; a stop cancels the wait. The store logs nothing itself: the wait is
  // told here, once when it has lasted a second and once when it ends.
  auto& wait = options.store.lock_wait;
  wait.give_up_after_ms.reset();
  wait.cancel = owner_.cancel_;
  wait.on_waiting = [path = config.database.string()](std::int64_t waited_ms) {
    spdlog::warn(
        "database: {} is locked by another connection; waiting for it ({} ms so far; input is "
        "held, nothing is lost)",
        path, waited_ms);
  };
  wait.on_resumed = [](std::int64_t waited_ms) {
    spdlog::info("database: working again after waiting {:.1f} s for the lock",
                 static_cast<double>(waited_ms) / 1000.0);
  };
  auto ingestor = Ingestor::open(config, options, system_now_ms);
  if (!ingestor) {
    return fail(ingestor.error().kind,
                fmt::format("cannot open the database {}: {}", config.database.string(),
                            ingestor.error().message));
  }
  ingestor_ = std::move(*ingestor);
  sources_.clear();
  for (const auto& spec : ingestor_->config().sources) {
    if (spec.type == SourceSpec::Type::directory) {
      sources_.push_back(std::make_unique<FileSource>(
          FileSource{DropFolder(spec, *ingestor_), "folder " + spec.path.string(), {}}));
    } else if (spec.type == SourceSpec::Type::tail) {
      sources_.push_back(std::make_unique<FileSource>(
          FileSource{TailedFile(spec, *ingestor_), "tail " + spec.path.string(), {}}));
    }
  }
  tcp_ = std::make_unique<TcpConnections>(
      *ingestor_, TcpConnections::Hooks{[this] { commit_if_due(); }, [this] { commit(); },
                                        [this](const Error& error) { recover(error); }});
  ingestor_->add_commit_observer([this](bool committed) {
    if (!committed) return;
    store_works();
    after_commit();
  });
  const auto& loaded = ingestor_->config();
  for (const auto& source : sources_) spdlog::info("source: {}", source->label);
  if (loaded.sources.empty()) spdlog::warn("no sources configured: nothing will be read");
  after_commit();  // publishes the counters
  schedule_poll(true);
  schedule_alarm_tick();
  plan_recomputation();
  return ingestor_->store().schema_version();
}

bool WriterCore::close(std::string_view tcp_reason) {
  if (!ingestor_) return true;
  // Whatever was posted or armed for this configuration does nothing when it comes.
  ++generation_;
  poll_posted_ = false;
  recompute_posted_ = false;
  commit_timer_armed_ = false;
  poll_timer_.cancel();
  alarm_timer_.cancel();
  commit_timer_.cancel();
  recomputations_.clear();  // planned again for the next configuration (the work left is found)
  bool ok = true;
  if (auto committed = ingestor_->commit(); !committed) {
    if (committed.error().kind == ErrorKind::cancelled) {
      // Another process holds the lock past the stop's deadline. Nothing acknowledged is lost:
      // the batch's input is read again at the next start, and tcp clients send again what was
      // not acknowledged.
      spdlog::warn(
          "the database is still locked by another connection; what was not committed "
          "will be read again at the next start");
    } else {
      spdlog::error("final commit failed: {}; that input will be read again at the next start",
                    committed.error().message);
      ok = false;
    }
  }
  tcp_->close_all(tcp_reason);
  tcp_.reset();
  sources_.clear();
  carried_.add(ingestor_->counts());
  ingestor_.reset();  // closes the database
  return ok;
}

int WriterCore::stop() {
  stopping_ = true;
  const bool ok = close("the service is stopping; send again any lines after your last ok");
  spdlog::info("stopped; {}", summary(carried_));
  return ok ? 0 : 1;
}

// ---- tcp connections ---------------------------------------------------------------------------

void WriterCore::connect(TcpLink link) {
  if (!usable()) {
    TcpReport report;
    report.closing = reply::closing("the service is not taking input; try again soon");
    link.deliver(std::move(report));
    return;
  }
  tcp_->connect(std::move(link));
}

void WriterCore::feed(std::uint64_t id, const std::string& bytes) {
  if (!usable()) return;
  tcp_->feed(id, bytes);
  arm_commit_timer();
}

void WriterCore::finish(std::uint64_t id) {
  if (!usable()) return;
  tcp_->finish(id);
  arm_commit_timer();
}

void WriterCore::disconnect(std::uint64_t id) {
  if (tcp_) tcp_->disconnect(id);
}

// ---- reading the files -------------------------------------------------------------------------

void WriterCore::schedule_poll(bool more_waiting) {
  if (!usable()) return;
  if (more_waiting) {
    if (poll_posted_) return;
    poll_posted_ = true;
    asio::post(io_, [this, generation = generation_] {
      if (generation != generation_) return;  // posted for a closed configuration
      poll_posted_ = false;
      poll();
    });
    return;
  }
  poll_timer_.expires_after(kIdlePoll);
  poll_timer_.async_wait([this, generation = generation_](const boost::system::error_code& error) {
    if (!error && generation == generation_) poll();  // else cancelled at a stop or reload
  });
}

void WriterCore::poll() {
  if (!usable()) return;
  bool more = false;
  for (auto& source : sources_) {
    auto polled = source->poll(kBytesPerPoll);
    if (!polled) {
      if (polled.error().kind == ErrorKind::database ||
          polled.error().kind == ErrorKind::cancelled) {
        recover(polled.error());
        return;
      }
      // A source's own trouble (a permission, a vanished file): log and go on with the others.
      // The same trouble is logged once, not five times a second.
      if (polled.error().message != source->trouble) {
        spdlog::warn("{}: {}", source->label, polled.error().message);
        source->trouble = polled.error().message;
      }
      continue;
    }
    if (!source->trouble.empty()) {
      spdlog::info("{}: working again", source->label);
      source->trouble.clear();
    }
    more = more || *polled;
  }
  // Commit when the batch is full or old, and also as soon as the sources have nothing more
  // waiting: a live reading is then visible at once, while a large file is still read in full
  // batches.
  if ((ingestor_->commit_due() || !more) && !commit()) return;
  arm_commit_timer();
  schedule_poll(more);
}

// ---- commits -----------------------------------------------------------------------------------

bool WriterCore::commit() {
  if (!ingestor_) return true;
  if (auto committed = ingestor_->commit(); !committed) {
    recover(committed.error());
    return false;
  }
  return true;
}

void WriterCore::commit_if_due() {
  if (usable() && ingestor_->commit_due()) commit();
}

// A batch opened by a tcp connection must be committed within its age even when nothing else
// happens: a timer, armed whenever a batch is open.
void WriterCore::arm_commit_timer() {
  if (!usable() || commit_timer_armed_ || !ingestor_->batch_open()) return;
  commit_timer_armed_ = true;
  commit_timer_.expires_after(std::chrono::milliseconds(IngestorOptions{}.max_batch_age_ms));
  commit_timer_.async_wait(
      [this, generation = generation_](const boost::system::error_code& error) {
        if (error || generation != generation_) return;  // cancelled by a close, which disarmed it
        commit_timer_armed_ = false;
        if (!usable()) return;
        if (ingestor_->batch_open()) commit();
        arm_commit_timer();
      });
}

void WriterCore::store_works() {
  if (failing_since_ms_ == 0) return;
  spdlog::info("store: writing works again after {:.1f} s and {} failed attempt(s)",
               static_cast<double>(system_now_ms() - failing_since_ms_) / 1000.0, failed_attempts_);
  failing_since_ms_ = 0;
  failed_attempts_ = 0;
  recovery_pause_ = kRecoveryPause;
}

void WriterCore::after_commit() {
  if (!ingestor_) return;
  {
    auto& board = *owner_.live_;
    std::lock_guard lock(board.mutex);
    board.figures.counts = carried_;
    board.figures.counts.add(ingestor_->counts());
    board.figures.store_failing_since_ms = failing_since_ms_;
  }
  const auto now = ingestor_->now_ms();
  if (now - last_report_ms_ >= kReportEveryMs && ingestor_->counts().commits != reported_.commits) {
    spdlog::info("totals: {}", summary(ingestor_->counts()));
    reported_ = ingestor_->counts();
    last_report_ms_ = now;
  }
}

void WriterCore::recover(const Error& error) {
  if (!ingestor_ || stopping_) return;  // a stop commits (or drops) what is in hand itself
  // Nothing of the failed batch is stored and no progress past it: read again from stored
  // progress. Dropping the batch closes the tcp connections with lines in it (their clients
  // send them again).
  const bool cancelled = error.kind == ErrorKind::cancelled;
  if (cancelled) {
    spdlog::info(
        "database: stopped waiting for the lock; what was not committed is read again "
        "at the next start");
  } else if (error.kind == ErrorKind::damaged) {
    // A damaged file stays damaged: said once, with what to do, not at every retry.
    if (!damage_logged_) {
      spdlog::error("store: {}; nothing is stored until it is restored", error.message);
      damage_logged_ = true;
    }
  } else if (failing_since_ms_ == 0) {
    // The first failure is logged; the retries after it only when it ends (store_works).
    spdlog::error(
        "store: {}; the batch is dropped and its input will be read again, in {} s, then at "
        "growing intervals up to {} s until writing works again",
        error.message, std::chrono::duration_cast<std::chrono::seconds>(kRecoveryPause).count(),
        std::chrono::duration_cast<std::chrono::seconds>(kRecoveryPauseMax).count());
  } else {
    spdlog::debug("store: still failing ({} attempts): {}", failed_attempts_ + 1, error.message);
  }
  if (!cancelled) {
    if (failing_since_ms_ == 0) failing_since_ms_ = system_now_ms();
    ++failed_attempts_;
    auto& board = *owner_.live_;
    std::lock_guard lock(board.mutex);
    board.figures.store_failing_since_ms = failing_since_ms_;
  }
  if (auto reset = ingestor_->reset(); !reset) {
    spdlog::error("store: {}", reset.error().message);
  }
  for (auto& source : sources_) source->reset();
  if (cancelled) {
    stopping_ = true;  // a stop asked for the cancel: nothing more is read (it follows)
    return;
  }
  poll_timer_.expires_after(recovery_pause_);
  recovery_pause_ =
      std::min(recovery_pause_ * 2, std::chrono::steady_clock::duration(kRecoveryPauseMax));
  poll_timer_.async_wait([this, generation = generation_](const boost::system::error_code& error) {
    if (!error && generation == generation_) poll();
  });
}

// ---- the alarms' clock -------------------------------------------------------------------------

void WriterCore::schedule_alarm_tick() {
  if (!usable()) return;
  alarm_timer_.expires_after(kAlarmTick);
  alarm_timer_.async_wait([this, generation = generation_](const boost::system::error_code& error) {
    // operation_aborted, or another generation: cancelled at a stop or reload.
    if (error || generation != generation_ || !usable()) return;
    auto ticked = ingestor_->tick_alarms();
    if (!ticked) {
      recover(ticked.error());
    } else if (ingestor_->batch_open()) {
      commit();
    }
    schedule_alarm_tick();
  });
}

// ---- recomputing stored readings after a change of history or corrections ----------------------

void WriterCore::plan_recomputation() {
  recomputations_.clear();
  if (!usable() || !commit()) return;
  for (const auto& site : ingestor_->config().sites) {
    auto planned =
        Recomputation::plan(ingestor_->store(), ingestor_->config(), site.id, ingestor_->now_ms());
    if (!planned) {
      spdlog::error("{}: cannot plan the recomputation of its history: {}", site.id,
                    planned.error().message);
      continue;
    }
    if ((*planned)->done()) continue;
    const auto& totals = (*planned)->totals();
    spdlog::info("{}: recomputing {} readings from {} to {} (history or corrections changed)",
                 site.id, totals.readings_in_period, format_timestamp_utc(*totals.period_from_ms),
                 format_timestamp_utc(*totals.period_to_ms));
    recomputations_.push_back(std::move(*planned));
  }
  post_recompute_step();
}

void WriterCore::post_recompute_step() {
  if (recomputations_.empty() || recompute_posted_ || !usable()) return;
  recompute_posted_ = true;
  asio::post(io_, [this, generation = generation_] {
    if (generation != generation_) return;  // posted for a closed configuration
    recompute_posted_ = false;
    recompute_step();
  });
}

void WriterCore::recompute_step() {
  if (!usable() || recomputations_.empty()) return;
  // The recomputation writes on the ingest's connection: the open batch goes first.
  if (!commit()) {
    post_recompute_step();
    return;
  }
  Recomputation& work = *recomputations_.front();
  // The Ingestor notices the readings the step rewrites by itself (Store::stored_readings_changed).
  auto stepped = work.step(ingestor_->store(), kRecomputeStepReadings);
  if (!stepped) {
    spdlog::error(
        "{}: recomputation stopped: {}; what was committed stays, the rest is found "
        "again at the next start or SIGHUP",
        work.site_id(), stepped.error().message);
    recomputations_.erase(recomputations_.begin());
  } else if (work.done()) {
    const auto& totals = work.totals();
    spdlog::info(
        "{}: recomputed {} readings ({} changed, max discharge change {:.6g}, {} days "
        "refreshed, max daily volume change {:.6g}); see the `recomputations` view",
        work.site_id(), totals.readings_recomputed, totals.readings_changed,
        totals.max_discharge_change, totals.days_refreshed, totals.max_daily_volume_change);
    recomputations_.erase(recomputations_.begin());
  }
  post_recompute_step();
}

// ---- Writer: the thread and what crosses to it -------------------------------------------------

Writer::Writer(asio::io_context& loop)
    : loop_(loop),
      work_(asio::make_work_guard(io_)),
      core_(std::make_unique<WriterCore>(*this, io_)) {
  live_->figures.started_ms = system_now_ms();
  thread_ = std::thread([this] { io_.run(); });
}

Writer::~Writer() {
  work_.reset();
  io_.stop();  // after a stop() this only ends an idle run()
  if (thread_.joinable()) thread_.join();
}

template <typename Work>
void Writer::post(Work work) {
  asio::post(io_, std::move(work));
}

void Writer::open(Config config, std::function<void(Result<int>)> done) {
  post([this, config = std::move(config), done = std::move(done)]() mutable {
    auto opened = core_->open(config);
    asio::post(loop_, [done = std::move(done), opened] { done(opened); });
  });
}

void Writer::reload(Config config, std::function<void(Reloaded)> done) {
  post([this, config = std::move(config), done = std::move(done)]() mutable {
    Reloaded outcome;
    const Config* running = core_->config();
    const std::optional<Config> previous = running ? std::optional<Config>(*running) : std::nullopt;
    core_->close(
        "the service is reloading its configuration; send again any lines after your last ok");
    outcome.totals = core_->totals();
    if (auto opened = core_->open(config); opened) {
      outcome.applied = true;
      outcome.schema_version = *opened;
    } else {
      outcome.error = opened.error().message;
      outcome.running = previous && core_->open(*previous).has_value();
    }
    asio::post(loop_, [done = std::move(done), outcome] { done(outcome); });
  });
}

void Writer::stop(std::function<void(int)> done) {
  post([this, done = std::move(done)]() mutable {
    const int status = core_->stop();
    work_.reset();  // run() returns once the handlers cancelled by the stop have run
    asio::post(loop_, [done = std::move(done), status] { done(status); });
  });
}

void Writer::connect(TcpLink link) {
  post([this, link = std::move(link)]() mutable { core_->connect(std::move(link)); });
}

void Writer::feed(std::uint64_t connection, std::string bytes) {
  post([this, connection, bytes = std::move(bytes)] { core_->feed(connection, bytes); });
}

void Writer::finish(std::uint64_t connection) {
  post([this, connection] { core_->finish(connection); });
}

void Writer::disconnect(std::uint64_t connection) {
  post([this, connection] { core_->disconnect(connection); });
}

LiveFiguresSource Writer::live() const {
  return [board = live_] {
    std::lock_guard lock(board->mutex);
    return board->figures;
  };
}

}  // namespace stagewell::service
