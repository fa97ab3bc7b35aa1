#include "tcp_connections.hpp"

#include <spdlog/spdlog.h>

#include <optional>

namespace stagewell::service {
namespace {

// How often, at most, a listener's row of ingest_progress is rewritten while its lines arrive (so
// the metrics show the lag of a tcp source like a file's), ms.
constexpr std::int64_t kProgressEveryMs = 1000;

}  // namespace

struct TcpConnections::Connection {
  TcpLink link;
  TcpIntake intake;
  bool closed = false;  // told to close: whatever it still sends is ignored until disconnect()
};

TcpConnections::TcpConnections(Ingestor& ingestor, Hooks hooks)
    : ingestor_(ingestor), hooks_(std::move(hooks)) {
  ingestor_.add_commit_observer([alive = std::weak_ptr<bool>(alive_), this](bool committed) {
    if (alive.lock()) on_commit(committed);
  });
}

TcpConnections::~TcpConnections() = default;

void TcpConnections::connect(TcpLink link) {
  auto intake = TcpIntake::create(link.spec, "tcp " + link.peer, ingestor_);
  if (!intake) {
    // The source's zone was checked when the configuration was loaded: not expected.
    spdlog::error("{}: {}", link.listener, intake.error().message);
    TcpReport report;
    report.closing = reply::closing("the service cannot read this source");
    link.deliver(std::move(report));
    return;
  }
  const auto id = link.id;
  connections_[id] =
      std::make_unique<Connection>(Connection{std::move(link), std::move(*intake), false});
}

void TcpConnections::feed(std::uint64_t id, std::string_view bytes) {
  const auto found = connections_.find(id);
  if (found == connections_.end() || found->second->closed) return;
  Connection& connection = *found->second;
  std::string replies;
  auto fed = connection.intake.feed(bytes, replies);
  if (!fed) {
    store_failed(connection, std::move(replies), fed.error());
    return;
  }
  note_activity(connection);
  report(connection, std::move(replies), true);
  hooks_.commit_if_due();
}

void TcpConnections::finish(std::uint64_t id) {
  const auto found = connections_.find(id);
  if (found == connections_.end() || found->second->closed) return;
  Connection& connection = *found->second;
  std::string replies;
  auto done = connection.intake.finish(replies);
  if (!done) {
    store_failed(connection, std::move(replies), done.error());
    return;
  }
  note_activity(connection);
  report(connection, std::move(replies), true);
  // The client has sent its last line and waits only for its acknowledgement.
  if (connection.intake.awaiting_commit()) hooks_.commit_now();
}

void TcpConnections::disconnect(std::uint64_t id) { connections_.erase(id); }

void TcpConnections::store_failed(Connection& connection, std::string replies, const Error& error) {
  // A line of this connection could not be stored (the batch is spoiled, or could not even be
  // begun): the connection is closed at once with its last `ok` and the closing line — never an
  // `ok` past what is committed — and the batch is dropped, which closes the other connections
  // with lines in it (on_commit).
  if (!connection.intake.batch_dropped(replies)) replies += reply::store_failed();
  connection.closed = true;
  TcpReport out;
  out.replies = std::move(replies);
  out.took_chunk = true;
  out.closing = "";
  connection.link.deliver(std::move(out));
  hooks_.failed(error);
}

void TcpConnections::note_activity(Connection& connection) {
  if (!connection.intake.awaiting_commit()) return;
  // When lines last arrived, as the listener's row of ingest_progress (no offset: a socket cannot
  // be re-read), in the batch with the lines.
  const std::int64_t now = ingestor_.now_ms();
  auto& written = progress_written_ms_[connection.link.listener];
  if (now - written < kProgressEveryMs) return;
  if (auto recorded = ingestor_.record_progress(connection.link.listener, {"tcp", 0, now});
      !recorded) {
    hooks_.failed(recorded.error());
    return;
  }
  written = now;
}

void TcpConnections::report(Connection& connection, std::string replies, bool took_chunk) {
  // Nothing waits for a commit when no batch is open: whatever was fed is settled (stored before,
  // or a repeat of a stored reading).
  if (connection.intake.awaiting_commit() && !ingestor_.batch_open()) {
    connection.intake.committed();
  }
  connection.intake.report_ack(replies);
  TcpReport out;
  out.replies = std::move(replies);
  out.took_chunk = took_chunk;
  out.awaiting_commit = connection.intake.awaiting_commit();
  out.authenticated = connection.intake.authenticated();
  out.refused = connection.intake.refusal().has_value();
  out.lines = connection.intake.lines();
  out.acked = connection.intake.acked();
  if (out.refused) connection.closed = true;
  connection.link.deliver(std::move(out));
}

void TcpConnections::on_commit(bool committed) {
  for (auto& [id, connection] : connections_) {
    if (connection->closed || !connection->intake.awaiting_commit()) continue;
    if (committed) {
      connection->intake.committed();
      report(*connection, {}, false);
      continue;
    }
    spdlog::warn(
        "{}: lines {} to {} were not stored (the batch was dropped); closing so that the "
        "client sends them again",
        connection->link.peer, connection->intake.acked() + 1, connection->intake.lines());
    TcpReport out;
    connection->intake.batch_dropped(out.replies);  // the last `ok` and the closing line
    out.closing = "";
    connection->closed = true;
    connection->link.deliver(std::move(out));
  }
}

void TcpConnections::close_all(std::string_view reason) {
  for (auto& [id, connection] : connections_) {
    if (connection->closed) continue;
    TcpReport out;
    if (!ingestor_.batch_open()) connection->intake.committed();
    connection->intake.report_ack(out.replies);
    out.closing = reply::closing(reason);
    connection->link.deliver(std::move(out));
  }
  connections_.clear();
}

}  // namespace stagewell::service
