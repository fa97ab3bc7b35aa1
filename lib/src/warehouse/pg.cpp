#include "warehouse/pg.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <thread>
#include <nlohmann/json.hpp>

namespace stagewell::pg {
namespace {

std::string trimmed(const char* message) {
  std::string text = message != nullptr ? message : "";
  while (!text.empty() && (text.back() == '\n' || text.back() == ' ')) text.pop_back();
  return text.empty() ? std::string("no message from the server") : text;
}

bool plain_ascii(std::string_view text) {
  return std::all_of(text.begin(), text.end(),
                     [](char c) { return c != '\0' && static_cast<unsigned char>(c) < 0x80; });
}

// Valid UTF-8 without NUL: nlohmann::json's encoder replaces every invalid sequence by U+FFFD.
std::string as_utf8(std::string_view text) {
  const std::string escaped = nlohmann::json(std::string(text))
                                  .dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
  std::string out = nlohmann::json::parse(escaped).get<std::string>();
  std::string no_nul;
  no_nul.reserve(out.size());
  for (char c : out) {
    if (c == '\0') {
      no_nul += "\xEF\xBF\xBD";
    } else {
      no_nul += c;
    }
  }
  return no_nul;
}

}  // namespace

Result<Connection> Connection::open(
    const std::vector<std::pair<std::string, std::string>>& params) {
  std::vector<const char*> keywords;
  std::vector<const char*> values;
  for (const auto& [keyword, value] : params) {
    keywords.push_back(keyword.c_str());
    values.push_back(value.c_str());
  }
  keywords.push_back(nullptr);
  values.push_back(nullptr);
  PGconn* raw = PQconnectdbParams(keywords.data(), values.data(), 1);
  if (raw == nullptr) return fail(ErrorKind::io, "out of memory opening a PostgreSQL connection");
  Connection connection(raw);
  if (PQstatus(raw) != CONNECTION_OK) {
    return fail(ErrorKind::io, trimmed(PQerrorMessage(raw)));
  }
  // Notices ("schema already exists, skipping") are not for the program's output.
  PQsetNoticeProcessor(
      raw, [](void*, const char*) {}, nullptr);
  return connection;
}

Connection::Connection(PGconn* connection)
    : connection_(connection), canceller_(PQgetCancel(connection), PQfreeCancel) {}

bool Connection::ok() const { return connection_ && PQstatus(connection_.get()) == CONNECTION_OK; }

std::string Connection::describe() const {
  PGconn* c = connection_.get();
  const char* host = PQhost(c);
  const char* port = PQport(c);
  return fmt::format("database {} on {}:{} as {}", PQdb(c) ? PQdb(c) : "?",
                     host != nullptr ? host : "?", port != nullptr ? port : "?",
                     PQuser(c) ? PQuser(c) : "?");
}

int Connection::server_version() const { return PQserverVersion(connection_.get()); }

Result<ResultPtr> Connection::exec(std::string_view sql) {
  ResultPtr result(PQexec(connection_.get(), std::string(sql).c_str()));
  const auto status = result ? PQresultStatus(result.get()) : PGRES_FATAL_ERROR;
  if (status != PGRES_COMMAND_OK && status != PGRES_TUPLES_OK) {
    return fail(ErrorKind::io, trimmed(result ? PQresultErrorMessage(result.get())
                                              : PQerrorMessage(connection_.get())));
  }
  return result;
}

Result<ResultPtr> Connection::exec(std::string_view sql,
                                   const std::vector<std::optional<std::string>>& params) {
  std::vector<const char*> values;
  values.reserve(params.size());
  for (const auto& param : params) values.push_back(param ? param->c_str() : nullptr);
  ResultPtr result(PQexecParams(connection_.get(), std::string(sql).c_str(),
                                static_cast<int>(values.size()), nullptr, values.data(), nullptr,
                                nullptr, 0));
  const auto status = result ? PQresultStatus(result.get()) : PGRES_FATAL_ERROR;
  if (status != PGRES_COMMAND_OK && status != PGRES_TUPLES_OK) {
    return fail(ErrorKind::io, trimmed(result ? PQresultErrorMessage(result.get())
                                              : PQerrorMessage(connection_.get())));
  }
  return result;
}

Result<void> Connection::copy_in(std::string_view copy_sql, std::string_view data) {
  PGconn* c = connection_.get();
  ResultPtr started(PQexec(c, std::string(copy_sql).c_str()));
  if (!started || PQresultStatus(started.get()) != PGRES_COPY_IN) {
    return fail(ErrorKind::io,
                trimmed(started ? PQresultErrorMessage(started.get()) : PQerrorMessage(c)));
  }
  // In pieces: one call per megabyte keeps libpq's own buffer small.
  constexpr std::size_t kPiece = 1 << 20;
  for (std::size_t at = 0; at < data.size(); at += kPiece) {
    const auto piece = data.substr(at, kPiece);
    if (PQputCopyData(c, piece.data(), static_cast<int>(piece.size())) != 1) {
      return fail(ErrorKind::io, trimmed(PQerrorMessage(c)));
    }
  }
  if (PQputCopyEnd(c, nullptr) != 1) return fail(ErrorKind::io, trimmed(PQerrorMessage(c)));
  std::optional<std::string> error;
  while (PGresult* raw = PQgetResult(c)) {
    ResultPtr result(raw);
    if (PQresultStatus(raw) != PGRES_COMMAND_OK && !error) {
      error = trimmed(PQresultErrorMessage(raw));
    }
  }
  if (error) return fail(ErrorKind::io, *error);
  return {};
}

void Connection::cancel() {
  if (!canceller_) return;
  // PQcancel connects to the server anew and may wait as long as a connection to an unreachable
  // host takes: on a thread of its own, so that whoever asks (the service's loop) never waits.
  std::thread([canceller = canceller_] {
    char message[256];
    (void)PQcancel(canceller.get(), message, sizeof message);
  }).detach();
}

std::optional<std::string> value(const PGresult* result, int row, int column) {
  if (PQgetisnull(result, row, column)) return std::nullopt;
  return std::string(PQgetvalue(result, row, column),
                     static_cast<std::size_t>(PQgetlength(result, row, column)));
}

void append_copy_field(std::string& out, std::string_view text) {
  std::string converted;
  if (!plain_ascii(text)) {
    converted = as_utf8(text);
    text = converted;
  }
  for (char c : text) {
    switch (c) {
      case '\\':
        out += "\\\\";
        break;
      case '\t':
        out += "\\t";
        break;
      case '\n':
        out += "\\n";
        break;
      case '\r':
        out += "\\r";
        break;
      default:
        out += c;
    }
  }
}

}  // namespace stagewell::pg
