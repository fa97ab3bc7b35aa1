#include "stagewell/tcp_intake.hpp"

#include <fmt/format.h>

namespace stagewell {
namespace {

constexpr std::string_view kByteOrderMark = "\xEF\xBB\xBF";
// Longest reason in an error line, bytes: enough to quote the offending value.
constexpr std::size_t kLongestReason = 300;

std::string_view trim(std::string_view text) {
  while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
  while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
  return text;
}

// A reply is one line of text whatever the input was: control bytes become '?', and a long reason
// is cut at a UTF-8 character boundary.
std::string one_line(std::string_view text) {
  if (text.size() > kLongestReason) {
    std::size_t cut = kLongestReason;
    while (cut > 0 && (static_cast<unsigned char>(text[cut]) & 0xC0) == 0x80) --cut;
    text = text.substr(0, cut);
  }
  std::string out(text);
  for (char& c : out) {
    if (static_cast<unsigned char>(c) < 0x20 || c == 0x7F) c = '?';
  }
  return out;
}

// One CSV field holding `name` (the column names come from the configuration and may hold commas).
std::string quoted_field(std::string_view name) {
  std::string out = "\"";
  for (const char c : name) {
    out += c;
    if (c == '"') out += '"';
  }
  return out + "\"";
}

}  // namespace

namespace reply {
std::string ok(std::int64_t line) { return fmt::format("ok {}\n", line); }
std::string error(std::int64_t line, std::string_view kind, std::string_view reason) {
  return fmt::format("error {} {} {}\n", line, kind, one_line(reason));
}
std::string refused(std::string_view what, std::string_view reason) {
  return fmt::format("refused {} {}\n", what, one_line(reason));
}
std::string closing(std::string_view reason) {
  return fmt::format("closing {}\n", one_line(reason));
}
std::string store_failed() {
  return closing("the store failed; send again the lines after your last ok");
}
}  // namespace reply

bool same_secret(std::string_view given, std::string_view secret) {
  // Every byte of the secret is compared, whatever `given` holds, and differences are only ORed
  // together: no early exit, so the time depends on the secret's length alone.
  unsigned difference = given.size() == secret.size() ? 0U : 1U;
  for (std::size_t i = 0; i < secret.size(); ++i) {
    const auto g = static_cast<unsigned char>(i < given.size() ? given[i] : 0);
    difference |= static_cast<unsigned>(g ^ static_cast<unsigned char>(secret[i]));
  }
  return difference == 0;
}

Result<TcpIntake> TcpIntake::create(const SourceSpec& spec, std::string source_name,
                                    Ingestor& ingestor) {
  auto intake = LineIntake::create(spec, std::move(source_name), ingestor);
  if (!intake) return std::unexpected(intake.error());
  return TcpIntake(spec, std::move(*intake));
}

TcpIntake::TcpIntake(const SourceSpec& spec, LineIntake intake)
    : secret_(spec.tcp.secret),
      columns_(spec.columns),
      need_site_(!spec.site.has_value()),
      intake_(std::move(intake)),
      splitter_(spec.tcp.max_line_bytes) {
  if (need_site_) default_header_ = quoted_field(columns_.site) + ",";
  default_header_ += quoted_field(columns_.time) + "," + quoted_field(columns_.stage);
}

Result<void> TcpIntake::feed(std::string_view bytes, std::string& replies) {
  replies_ = &replies;
  splitter_.feed(bytes, [this](const Line& line) { on_line(line); });
  replies_ = nullptr;
  return status_;
}

Result<void> TcpIntake::finish(std::string& replies) {
  replies_ = &replies;
  splitter_.finish([this](const Line& line) { on_line(line); });
  replies_ = nullptr;
  return status_;
}

void TcpIntake::committed() { acked_ = number_; }

bool TcpIntake::batch_dropped(std::string& replies) {
  if (!awaiting_commit()) return false;
  report_ack(replies);
  replies += reply::store_failed();
  dropped_ = true;
  return true;
}

void TcpIntake::report_ack(std::string& replies) {
  if (acked_ <= reported_ || refusal_) return;
  replies += reply::ok(acked_);
  reported_ = acked_;
}

void TcpIntake::refuse(std::string_view reason) {
  refusal_ = std::string(reason);
  *replies_ += reply::refused("auth", reason);
}

bool TcpIntake::authenticate(const Line& line) {
  const std::string_view text = line.text;
  const bool auth_line = text == "auth" || text.starts_with("auth ");
  if (!auth_line) {
    if (secret_) {
      refuse("the first line must be: auth <secret>");
      return true;
    }
    authenticated_ = true;  // no secret: this is the first line of readings
    return false;
  }
  // The secret is never logged or stored: this line goes nowhere but here.
  if (secret_ && (line.too_long || !same_secret(trim(text.substr(4)), *secret_))) {
    refuse("wrong secret");
    return true;
  }
  authenticated_ = true;
  return true;
}

void TcpIntake::choose_columns(const Line& line) {
  std::string_view text = line.text;
  if (line.number == 1 && text.starts_with(kByteOrderMark)) text.remove_prefix(3);
  const std::string_view content = trim(text);
  if (content.empty() || content.front() == '#') return;  // skipped; the next line decides
  if (!line.too_long && map_header(text, columns_, need_site_)) return;  // a header: parsed below
  // Not a header: the source's columns in their default order, and this line is a reading.
  intake_.assume_header(default_header_);
}

void TcpIntake::on_line(const Line& raw_line) {
  // A spoiled or dropped batch, or a refusal: nothing more is read.
  if (!status_ || dropped_ || refusal_) return;
  if (!authenticated_ && authenticate(raw_line)) return;
  const Line line{raw_line.text, ++number_, raw_line.too_long};
  if (!intake_.has_header()) choose_columns(line);

  auto taken = intake_.take(line);
  if (!taken) {
    last_stored_line_ = line.number;  // it may be half in the batch, which is spoiled now
    status_ = std::unexpected(std::move(taken.error()));
    return;
  }
  if (taken->reached_store()) last_stored_line_ = line.number;
  if (taken->kind == LineOutcome::Kind::rejected || taken->kind == LineOutcome::Kind::conflict) {
    // Kept in rejects, and the client told at once; a later `ok` covers the line.
    *replies_ += reply::error(line.number, taken->reject_kind, taken->reason);
  }
  // A header, blank or comment line needs no storing: it is acknowledged as soon as every line
  // before it is.
  if (last_stored_line_ <= acked_) acked_ = number_;
}

}  // namespace stagewell
