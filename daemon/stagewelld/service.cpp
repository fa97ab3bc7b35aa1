#include "service.hpp"

#include <spdlog/spdlog.h>

#include <boost/asio/post.hpp>
#include <chrono>
#include <csignal>
#include <filesystem>
#include <variant>

#include "stagewell/timestamp.hpp"

namespace stagewell::service {
namespace {

namespace fs = std::filesystem;

// Bytes one source may read per poll before the loop moves on (keeps signals and other sources
// responsive while a large file is read).
constexpr std::size_t kBytesPerPoll = 1 << 20;
// How often sources are polled for new data when none was waiting.
constexpr auto kIdlePoll = std::chrono::milliseconds(200);
// Pause after a failure of the store before reading again.
constexpr auto kRecoveryPause = std::chrono::seconds(1);
// How often the alarms judged by the clock (stale sensors) are evaluated. A stale alarm is raised
// at most this long after its `after` has passed.
constexpr auto kAlarmTick = std::chrono::seconds(10);
// How often a line of totals is logged while readings arrive.
constexpr std::int64_t kReportEveryMs = 60'000;

void ensure_directory(const fs::path& path, std::string_view what) {
  if (path.empty() || fs::exists(path)) return;
  std::error_code error;
  fs::create_directories(path, error);
  if (error) {
    spdlog::warn("cannot create {} {}: {}", what, path.string(), error.message());
  } else {
    spdlog::info("created {} {}", what, path.string());
  }
}

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

}  // namespace

struct Service::Source {
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

Service::Service(boost::asio::io_context& io, std::string config_path, Logging& logging)
    : io_(io),
      config_path_(std::move(config_path)),
      logging_(logging),
      signals_(io),
      poll_timer_(io),
      alarm_timer_(io) {}

Service::~Service() = default;

bool Service::start() {
  auto config = load_config(config_path_);
  if (!config) {
    for (const auto& error : config.error()) spdlog::error("{}", error.to_string());
    spdlog::error("{}: {} configuration error(s); not starting", config_path_,
                  config.error().size());
    return false;
  }
  if (auto problem = logging_.apply(config->log)) spdlog::warn("{}", *problem);
  started_ms_ = system_now_ms();
  if (!open(*config)) return false;
  signals_.add(SIGINT);
  signals_.add(SIGTERM);
  signals_.add(SIGHUP);
  wait_for_signal();
  schedule_poll(true);
  schedule_alarm_tick();
  plan_recomputation();
  return true;
}

bool Service::open(const Config& config) {
  ensure_directory(config.database.parent_path(), "database directory");
  // One service per database: taken before the database is opened, kept across reloads that
  // keep the database, and moved when a reload names another one.
  if (!lock_ || lock_->path() != ServiceLock::path_for(config.database)) {
    auto lock = ServiceLock::acquire(config.database);
    if (!lock) {
      spdlog::error("{}", lock.error().message);
      return false;
    }
    lock_ = std::move(*lock);
  }
  for (const auto& spec : config.sources) {
    ensure_directory(spec.type == SourceSpec::Type::directory ? spec.path : spec.path.parent_path(),
                     "source directory");
  }
  IngestorOptions options;
  // The store logs nothing itself: a long wait for another process's lock is told here.
  options.store.lock_wait.on_waiting = [path = config.database.string()](std::int64_t waited_ms) {
    spdlog::warn("store: waiting for a lock another connection holds on {} ({} ms so far)", path,
                 waited_ms);
  };
  options.store.lock_wait.on_resumed = [](std::int64_t waited_ms) {
    spdlog::info("store: the lock was released after {} ms; going on", waited_ms);
  };
  auto ingestor = Ingestor::open(config, options, system_now_ms);
  if (!ingestor) {
    spdlog::error("cannot open the database {}: {}", config.database.string(),
                  ingestor.error().message);
    return false;
  }
  sources_.clear();
  ingestor_ = std::move(*ingestor);
  for (const auto& spec : ingestor_->config().sources) {
    if (spec.type == SourceSpec::Type::directory) {
      sources_.push_back(std::make_unique<Source>(
          Source{DropFolder(spec, *ingestor_), "folder " + spec.path.string(), {}}));
    } else if (spec.type == SourceSpec::Type::tail) {
      sources_.push_back(std::make_unique<Source>(
          Source{TailedFile(spec, *ingestor_), "tail " + spec.path.string(), {}}));
    }
  }
  // ---- tcp sources: listeners on this io_context; see tcp_listener.hpp ----
  tcp_.reset();
  auto tcp = TcpSources::open(
      io_, *ingestor_, {[this] { commit_if_due(); }, [this](const Error& e) { recover(e); }});
  if (!tcp) {
    spdlog::error("{}", tcp.error().message);
    return false;
  }
  tcp_ = std::move(*tcp);
  // ---- end of tcp sources ----
  if (!open_http()) return false;  // http
  const auto& loaded = ingestor_->config();
  std::string site_ids;
  for (const auto& site : loaded.sites) site_ids += (site_ids.empty() ? "" : ", ") + site.id;
  spdlog::info(
      "stagewelld {} started: {} site(s) ({}), {} source(s), database {} (schema version {}), "
      "{} units",
      STAGEWELL_VERSION, loaded.sites.size(), site_ids, sources_.size(), loaded.database.string(),
      ingestor_->store().schema_version(), units::name(loaded.units));
  for (const auto& source : sources_) spdlog::info("source: {}", source->label);
  if (sources_.empty() && tcp_->size() == 0) {  // tcp sources too
    spdlog::warn("no sources configured: nothing will be read");
  }
  return true;
}

void Service::schedule_poll(bool more_waiting) {
  if (stopping_) return;
  if (more_waiting) {
    if (poll_posted_) return;
    poll_posted_ = true;
    boost::asio::post(io_, [this] {
      poll_posted_ = false;
      poll();
    });
    return;
  }
  poll_timer_.expires_after(kIdlePoll);
  poll_timer_.async_wait([this](const boost::system::error_code& error) {
    if (!error) poll();  // operation_aborted: cancelled at shutdown or reload
  });
}

void Service::poll() {
  if (stopping_ || !ingestor_) return;
  bool more = false;
  for (auto& source : sources_) {
    auto polled = source->poll(kBytesPerPoll);
    if (!polled) {
      if (polled.error().kind == ErrorKind::database) {
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
  if (ingestor_->commit_due() || !more) {
    if (auto committed = ingestor_->commit(); !committed) {
      recover(committed.error());
      return;
    }
  }
  const auto now = ingestor_->now_ms();
  if (now - last_report_ms_ >= kReportEveryMs && ingestor_->counts().commits != reported_.commits) {
    spdlog::info("totals: {}", summary(ingestor_->counts()));
    reported_ = ingestor_->counts();
    last_report_ms_ = now;
  }
  logging_.reopen_if_rotated();
  schedule_poll(more);
}

void Service::recover(const Error& error) {
  // Nothing of the failed batch is stored and no progress past it: re-read from stored progress.
  spdlog::error("store: {}; the batch is dropped and its input will be read again", error.message);
  if (auto reset = ingestor_->reset(); !reset) {
    spdlog::error("store: {}", reset.error().message);
  }
  for (auto& source : sources_) source->reset();
  poll_timer_.expires_after(kRecoveryPause);
  poll_timer_.async_wait([this](const boost::system::error_code& error) {
    if (!error) poll();
  });
}

// tcp sources: commit as soon as the batch is due rather than at the next poll (up to
// kIdlePoll later), so that clients are acknowledged within the batch age.
void Service::commit_if_due() {
  if (stopping_ || !ingestor_ || !ingestor_->commit_due()) return;
  if (auto committed = ingestor_->commit(); !committed) recover(committed.error());
}

void Service::schedule_alarm_tick() {
  if (stopping_) return;
  alarm_timer_.expires_after(kAlarmTick);
  alarm_timer_.async_wait([this](const boost::system::error_code& error) {
    if (error || stopping_) return;  // operation_aborted: cancelled at shutdown
    if (ingestor_) {
      auto ticked = ingestor_->tick_alarms();
      if (ticked && ingestor_->batch_open()) ticked = ingestor_->commit();
      if (!ticked) recover(ticked.error());
    }
    schedule_alarm_tick();
  });
}

// ---- http: the status page, API and metrics (http_server.hpp) ----
bool Service::open_http() {
  stop_http();
  const Config& config = ingestor_->config();
  if (!config.http) return true;
  // The read-only reader opens after the Ingestor, which has brought the schema up to date.
  auto api = StatusApi::open(config, [this] {
    LiveFigures live;
    live.counts = carried_;
    if (ingestor_) live.counts.add(ingestor_->counts());
    live.started_ms = started_ms_;
    return live;
  });
  if (!api) {
    spdlog::error("http: cannot open the database for reading: {}", api.error().message);
    return false;
  }
  auto server = HttpServer::open(io_, *config.http, std::move(*api));
  if (!server) {
    spdlog::error("{}", server.error().message);
    return false;
  }
  http_ = std::move(*server);
  return true;
}

void Service::stop_http() {
  if (http_) http_->stop();
  http_.reset();
}
// ---- end of http ----

void Service::wait_for_signal() {
  signals_.async_wait([this](const boost::system::error_code& error, int signal_number) {
    if (error) return;  // cancelled at shutdown
    on_signal(signal_number);
  });
}

void Service::on_signal(int signal_number) {
  if (signal_number == SIGHUP) {
    reload();
    wait_for_signal();
    return;
  }
  spdlog::info("{}: stopping; committing what is in hand",
               signal_number == SIGTERM ? "SIGTERM" : "SIGINT");
  // From now on the default action applies: a second SIGTERM or SIGINT ends the process at once.
  boost::system::error_code ignored;
  signals_.remove(SIGINT, ignored);
  signals_.remove(SIGTERM, ignored);
  shut_down();
}

void Service::shut_down() {
  stopping_ = true;
  poll_timer_.cancel();
  alarm_timer_.cancel();
  if (tcp_) tcp_->stop();  // tcp sources: read no more; close once acknowledged
  stop_http();             // http
  if (ingestor_) {
    if (auto committed = ingestor_->commit(); !committed) {
      spdlog::error("final commit failed: {}; that input will be read again at the next start",
                    committed.error().message);
      exit_code_ = 1;
    }
    spdlog::info("stopped; {}", summary(ingestor_->counts()));
  }
  boost::system::error_code ignored;
  signals_.cancel(ignored);  // nothing is left waiting: io_context::run() returns
}

void Service::reload() {
  logging_.reopen();
  spdlog::info("SIGHUP: reloading {}", config_path_);
  auto config = load_config(config_path_);
  if (!config) {
    for (const auto& error : config.error()) spdlog::error("{}", error.to_string());
    spdlog::error("the new configuration has {} error(s); keeping the running one",
                  config.error().size());
    return;
  }
  if (auto committed = ingestor_->commit(); !committed) {
    spdlog::error("commit before reload failed: {}", committed.error().message);
  }
  const auto totals = ingestor_->counts();
  const Config previous = ingestor_->config();
  recomputations_.clear();  // planned again for the new configuration (the work left is found)
  auto old_ingestor = std::move(ingestor_);
  auto old_sources = std::move(sources_);
  sources_.clear();
  old_sources.clear();
  tcp_.reset();  // tcp sources: closes their connections before the Ingestor goes
  stop_http();   // http: frees the port and the read-only connection
  carried_.add(totals);
  old_ingestor.reset();  // closes the database before it is opened again
  if (auto problem = logging_.apply(config->log)) spdlog::warn("{}", *problem);
  if (!open(*config)) {
    // The new configuration's database cannot be opened: go back to the running configuration.
    spdlog::error("reload failed; going on with the configuration that was running");
    if (auto problem = logging_.apply(previous.log)) spdlog::warn("{}", *problem);
    if (!open(previous)) {
      spdlog::error("cannot reopen the running configuration either; stopping");
      exit_code_ = 1;
      shut_down();
      return;
    }
  }
  spdlog::info("reloaded; totals before the reload: {}", summary(totals));
  plan_recomputation();
}

// ---- Recomputing stored readings after a change of history or corrections ----

namespace {

// Readings per step: one transaction of this many takes some tens of milliseconds, so sources,
// sockets and signals wait no longer than that between steps.
constexpr std::int64_t kRecomputeStepReadings = 2000;

}  // namespace

void Service::plan_recomputation() {
  recomputations_.clear();
  if (!ingestor_) return;
  if (auto committed = ingestor_->commit(); !committed) {
    recover(committed.error());
    return;
  }
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

void Service::post_recompute_step() {
  if (recomputations_.empty() || recompute_posted_ || stopping_) return;
  recompute_posted_ = true;
  boost::asio::post(io_, [this] {
    recompute_posted_ = false;
    recompute_step();
  });
}

void Service::recompute_step() {
  if (stopping_ || !ingestor_ || recomputations_.empty()) return;
  // The recomputation writes on the ingest's connection: the open batch goes first.
  if (auto committed = ingestor_->commit(); !committed) {
    recover(committed.error());
    post_recompute_step();
    return;
  }
  Recomputation& work = *recomputations_.front();
  // The Ingestor notices the readings rewritten by itself (Store::stored_readings_changed).
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

}  // namespace stagewell::service
