#include "service.hpp"

#include <fmt/format.h>
#include <spdlog/spdlog.h>

#include <chrono>
#include <csignal>
#include <filesystem>

namespace stagewell::service {
namespace {

namespace fs = std::filesystem;

// How often the loop checks whether the log file was rotated away.
constexpr auto kLogCheck = std::chrono::seconds(1);
// From a stop signal, how long the writer may go on waiting for a lock another process holds on
// the database before it gives up (what it had not committed is read again at the next start).
constexpr auto kStopLockWait = std::chrono::milliseconds(1000);

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

void ensure_directories(const Config& config) {
  ensure_directory(config.database.parent_path(), "database directory");
  for (const auto& spec : config.sources) {
    if (spec.type == SourceSpec::Type::tcp) continue;
    ensure_directory(spec.type == SourceSpec::Type::directory ? spec.path : spec.path.parent_path(),
                     "source directory");
  }
}

}  // namespace

Service::Service(boost::asio::io_context& io, std::string config_path, Logging& logging)
    : io_(io),
      config_path_(std::move(config_path)),
      logging_(logging),
      signals_(io),
      log_timer_(io),
      stop_timer_(io),
      watchdog_timer_(io) {}

Service::~Service() {
  close_network();
  stop_shipping();
  stopped_shipping_.clear();  // joins the shipping threads
  writer_.reset();            // joins the writer's thread
}

void Service::stop_shipping() {
  if (!shipping_) return;
  shipping_->request_stop();
  stopped_shipping_.push_back(std::move(shipping_));
  // Those that have ended are joined at once; the others when the service ends.
  std::erase_if(stopped_shipping_, [](const auto& s) { return s->finished(); });
}

void Service::start_shipping() {
  stop_shipping();
  if (!config_ || !config_->warehouse) return;
  shipping_ = std::make_unique<Shipping>(*config_, shipping_board_);
}

LiveFiguresSource Service::live_figures() const {
  const bool shipping = config_ && config_->warehouse;
  return [writer = writer_->live(), board = shipping ? shipping_board_ : nullptr] {
    LiveFigures figures = writer();
    if (board) figures.warehouse = board->get();
    return figures;
  };
}

bool Service::start() {
  auto config = load_config(config_path_);
  if (!config) {
    for (const auto& error : config.error()) spdlog::error("{}", error.to_string());
    spdlog::error("{}: {} configuration error(s); not starting", config_path_,
                  config.error().size());
    return false;
  }
  if (auto problem = logging_.apply(config->log)) spdlog::warn("{}", *problem);
  ensure_directories(*config);
  // One service per database: taken before the database is opened.
  auto lock = ServiceLock::acquire(config->database);
  if (!lock) {
    spdlog::error("{}", lock.error().message);
    return false;
  }
  lock_ = std::move(*lock);
  busy_.emplace(boost::asio::make_work_guard(io_));
  signals_.add(SIGINT);
  signals_.add(SIGTERM);
  signals_.add(SIGHUP);
  wait_for_signal();
  schedule_log_check();
  schedule_watchdog();
  readiness_.status("opening the database " + config->database.string());
  writer_ = std::make_unique<Writer>(io_);
  writer_->open(
      *config, [this, config = *config](Result<int> result) { opened(config, std::move(result)); });
  return true;
}

void Service::opened(const Config& config, Result<int> schema_version) {
  if (stopping_) return;  // the stop has its own end
  if (!schema_version) {
    spdlog::error("{}", schema_version.error().message);
    exit_code_ = schema_version.error().kind == ErrorKind::damaged ? kExitDatabaseDamaged : 1;
    shut_down();
    return;
  }
  config_ = config;
  if (!open_network()) {
    exit_code_ = 1;
    shut_down();
    return;
  }
  log_started(*schema_version);
  start_shipping();
  readiness_.ready(summary());
  if (reload_waiting_) {
    reload_waiting_ = false;
    reload();
  }
}

std::string Service::summary() const {
  std::size_t files = 0;
  for (const auto& source : config_->sources) files += source.type != SourceSpec::Type::tcp;
  return fmt::format("running: {} site(s), {} file source(s), {} tcp source(s); database {}",
                     config_->sites.size(), files, tcp_ ? tcp_->size() : 0,
                     config_->database.string());
}

void Service::log_started(int schema_version) {
  std::string site_ids;
  for (const auto& site : config_->sites) site_ids += (site_ids.empty() ? "" : ", ") + site.id;
  std::size_t files = 0;
  for (const auto& source : config_->sources) files += source.type != SourceSpec::Type::tcp;
  spdlog::info(
      "stagewelld {} started: {} site(s) ({}), {} file source(s), {} tcp source(s), database {} "
      "(schema version {}), {} units",
      STAGEWELL_VERSION, config_->sites.size(), site_ids, files, tcp_->size(),
      config_->database.string(), schema_version, units::name(config_->units));
}

bool Service::open_network() {
  close_network();
  auto tcp = TcpSources::open(io_, *config_, *writer_);
  if (!tcp) {
    spdlog::error("{}", tcp.error().message);
    return false;
  }
  tcp_ = std::move(*tcp);
  if (config_->http) {
    // The readers open their read-only connections on their own threads, at the first request.
    auto readers = std::make_unique<HttpReaders>(io_, *config_, live_figures());
    auto server = HttpServer::open(io_, *config_->http, std::move(readers));
    if (!server) {
      spdlog::error("{}", server.error().message);
      return false;
    }
    http_ = std::move(*server);
  }
  return true;
}

void Service::close_network() {
  if (tcp_) tcp_->stop();  // accept no more; the writer tells each connection why it closes
  if (http_) http_->stop();
  http_.reset();
}

void Service::schedule_watchdog() {
  const auto interval = readiness_.watchdog_interval();
  if (!interval) return;
  readiness_.watchdog();
  watchdog_timer_.expires_after(*interval);
  watchdog_timer_.async_wait([this](const boost::system::error_code& error) {
    if (!error) schedule_watchdog();  // cancelled at the end
  });
}

void Service::schedule_log_check() {
  log_timer_.expires_after(kLogCheck);
  log_timer_.async_wait([this](const boost::system::error_code& error) {
    if (error) return;  // cancelled at the end
    logging_.reopen_if_rotated();
    schedule_log_check();
  });
}

// ---- signals -----------------------------------------------------------------------------------

void Service::wait_for_signal() {
  signals_.async_wait([this](const boost::system::error_code& error, int signal_number) {
    if (error) return;  // cancelled at the end
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
  wait_for_signal();  // SIGHUP is still caught (and ignored) while the writer finishes
}

void Service::shut_down() {
  if (stopping_) return;
  stopping_ = true;
  readiness_.stopping("stopping: committing what is in hand");
  close_network();
  stop_shipping();  // what it had not committed in the warehouse is shipped next time
  // A writer waiting for another process's lock gives up after a short while: the stop must not
  // hang on something outside the service.
  stop_timer_.expires_after(kStopLockWait);
  stop_timer_.async_wait([this](const boost::system::error_code& error) {
    if (!error) writer_->cancel_waits();
  });
  writer_->stop([this](int status) { stopped(status); });
}

void Service::stopped(int writer_status) {
  if (writer_status != 0) exit_code_ = writer_status;
  stop_timer_.cancel();
  // The writer's last words (acknowledgements, `closing`) are on their way to the clients; the
  // connections still open close as soon as those are sent.
  if (tcp_) tcp_->close_when_said();
  boost::system::error_code ignored;
  signals_.cancel(ignored);
  log_timer_.cancel();
  watchdog_timer_.cancel();
  busy_.reset();  // run() returns once the connections have closed
}

// ---- reloading ---------------------------------------------------------------------------------

void Service::reload() {
  if (stopping_) return;
  if (reloading_ || !config_) {
    // Applied once the database is open (or the reload in progress has ended).
    spdlog::info("SIGHUP: the configuration is read again once the database is open");
    reload_waiting_ = true;
    return;
  }
  logging_.reopen();
  spdlog::info("SIGHUP: reloading {}", config_path_);
  readiness_.reloading("reloading " + config_path_);
  auto config = load_config(config_path_);
  if (!config) {
    for (const auto& error : config.error()) spdlog::error("{}", error.to_string());
    spdlog::error("the new configuration has {} error(s); keeping the running one",
                  config.error().size());
    reload_refused(fmt::format("{} configuration error(s)", config.error().size()));
    return;
  }
  ensure_directories(*config);
  auto new_lock = std::make_shared<std::optional<ServiceLock>>();
  if (ServiceLock::path_for(config->database) != lock_->path()) {
    auto lock = ServiceLock::acquire(config->database);
    if (!lock) {
      spdlog::error("{}; keeping the running configuration", lock.error().message);
      reload_refused("the new database is in use by another service");
      return;
    }
    new_lock->emplace(std::move(*lock));
  }
  reloading_ = true;
  const LogSpec previous_log = config_->log;
  if (auto problem = logging_.apply(config->log)) spdlog::warn("{}", *problem);
  close_network();
  stop_shipping();  // the reload may turn shipping off, or point it elsewhere
  writer_->reload(
      *config, [this, config = *config, new_lock, previous_log](const Writer::Reloaded& outcome) {
        reloaded(config, new_lock, previous_log, outcome);
      });
}

void Service::reload_refused(std::string_view why) {
  readiness_.ready(
      fmt::format("{}; last reload refused ({}), the running configuration kept", summary(), why));
}

void Service::reloaded(Config config, std::shared_ptr<std::optional<ServiceLock>> new_lock,
                       LogSpec previous_log, const Writer::Reloaded& outcome) {
  reloading_ = false;
  if (outcome.applied) {
    config_ = std::move(config);
    if (*new_lock) lock_ = std::move(**new_lock);
  } else {
    spdlog::error("reload failed: {}; going on with the configuration that was running",
                  outcome.error);
    if (auto problem = logging_.apply(previous_log)) spdlog::warn("{}", *problem);
    if (!outcome.running) {
      spdlog::error("cannot reopen the running configuration either; stopping");
      exit_code_ = 1;
      shut_down();
      return;
    }
  }
  if (stopping_) return;
  if (!open_network()) {
    exit_code_ = 1;
    shut_down();
    return;
  }
  if (outcome.applied) log_started(outcome.schema_version);
  start_shipping();  // the new configuration's warehouse, or the running one's again
  spdlog::info("reloaded; totals before the reload: {}", outcome.totals);
  if (outcome.applied) {
    readiness_.ready(summary());
  } else {
    reload_refused(outcome.error);
  }
  if (reload_waiting_) {
    reload_waiting_ = false;
    reload();
  }
}

}  // namespace stagewell::service
