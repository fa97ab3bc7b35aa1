// The tcp source's protocol core without a socket: bytes fed to a TcpIntake on a real Ingestor and
// a temporary database, replies read back as text. What each reply must be comes from the
// protocol as docs/tcp-protocol.md defines it ("Readings over TCP"): lines after `auth` are
// numbered from 1, every line counts, `ok <n>` covers lines 1..n once stored (and not before the
// batch commits), `error <n> <kind> <reason>` is sent at once for a rejected line, `refused auth
// ...` ends a connection without the secret, and a stored discharge follows Manning's equation.
#include "stagewell/tcp_intake.hpp"

#include <doctest/doctest.h>
#include <sqlite3.h>

#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "source_test_support.hpp"

namespace stagewell {
namespace {

constexpr std::int64_t kNow = 1'778'738'400'000;  // 2026-05-14T06:00:00Z (Python datetime)
constexpr std::string_view kSecret = "s3cret-for-the-test-only";

// Three tcp sources: plain (lines up to 64 bytes, to test long lines cheaply), with a secret, and
// with a fixed site.
const std::string kSources =
    "sources:\n"
    "  - type: tcp\n    listen: 127.0.0.1:7301\n    max_line_bytes: 64\n"
    "  - type: tcp\n    listen: 127.0.0.1:7302\n    secret: " +
    std::string(kSecret) +
    "\n"
    "  - type: tcp\n    listen: 127.0.0.1:7303\n    site: g1\n";

enum Source { kPlain = 0, kWithSecret = 1, kFixedSite = 2 };

// A database, an Ingestor on it, and connections to one of its tcp sources.
struct Harness : test::Service {
  Harness() : Service(kSources, kNow) {}

  TcpIntake connect(Source source = kPlain) {
    auto intake = TcpIntake::create(config.sources.at(source), "tcp test", *ingestor);
    REQUIRE_MESSAGE(intake.has_value(), intake.error().message);
    return std::move(*intake);
  }

  // Feeds `bytes` and returns the replies they caused.
  static std::string feed(TcpIntake& intake, std::string_view bytes) {
    std::string replies;
    auto fed = intake.feed(bytes, replies);
    REQUIRE_MESSAGE(fed.has_value(), fed.error().message);
    return replies;
  }

  // Commits the open batch, as the service does when it is due, and returns the replies of each
  // connection told of it.
  std::string commit(TcpIntake& intake) {
    REQUIRE(ingestor->commit().has_value());
    intake.committed();
    std::string replies;
    intake.report_ack(replies);
    return replies;
  }

  // What another connection to the file sees: committed rows only.
  std::int64_t count(std::string_view sql) {
    auto raw = test::raw_connection(dir.db());
    return test::query_int(*raw, sql);
  }
  std::int64_t stored() { return count("SELECT count(*) FROM readings"); }
  std::int64_t stored_at(std::string_view site, double stage) {
    return count(
        fmt::format("SELECT count(*) FROM readings r JOIN sites s USING (site_key) "
                    "WHERE s.id = '{}' AND r.stage = {}",
                    site, stage));
  }
  std::int64_t rejects() { return count("SELECT count(*) FROM rejects"); }

  struct RejectRow {
    std::string source, position, reason;
  };
  std::vector<RejectRow> reject_rows() {
    auto raw = test::raw_connection(dir.db());
    auto select =
        raw->prepare("SELECT source, position, reason FROM rejected_lines ORDER BY reject_id");
    REQUIRE(select.has_value());
    std::vector<RejectRow> rows;
    while (select->step().value()) {
      rows.push_back({select->column_text(0), select->column_text(1), select->column_text(2)});
    }
    return rows;
  }
};

// ---- acknowledgement ---------------------------------------------------------------------------

TEST_CASE("readings are acknowledged only once their batch is committed") {
  Harness h;
  auto c = h.connect();
  CHECK(h.feed(c,
               "site,time,stage\n"
               "g1,2026-05-01T06:00:00Z,0.452\n"
               "g1,2026-05-01T06:01:00Z,0.455\n") == "");
  CHECK(c.lines() == 3);
  CHECK(c.awaiting_commit());
  std::string early;
  c.report_ack(early);
  // The header needs no storing: it is acknowledged at once; the readings wait for the commit.
  CHECK(early == "ok 1\n");
  CHECK(h.stored() == 0);  // nothing is stored before the commit, as another connection sees it

  CHECK(h.commit(c) == "ok 3\n");  // the header counts as a line
  CHECK_FALSE(c.awaiting_commit());
  CHECK(h.stored() == 2);
  // Manning's equation for a rectangular section, Q = A R^(2/3) S^(1/2) / n with A = b y and
  // P = b + 2 y (V. T. Chow, Open-Channel Hydraulics, 1959, ch. 5), computed with Debian's Python
  // for b = 2 m, y = 0.452 m, n = 0.014, S = 0.001: 0.9378965545225891 m^3/s. The stored value
  // comes from the site's rating table, within 0.05 % of the equation (docs/hydraulics.md).
  auto raw = test::raw_connection(h.dir.db());
  auto select = raw->prepare("SELECT discharge FROM readings ORDER BY time_ms LIMIT 1");
  REQUIRE(select.has_value());
  REQUIRE(select->step().value());
  CHECK(select->column_double(0) == doctest::Approx(0.9378965545225891).epsilon(5e-4));

  std::string again;
  c.report_ack(again);
  CHECK(again == "");  // an `ok` is sent once
}

TEST_CASE("blank and comment lines are acknowledged as soon as every line before them is") {
  Harness h;
  auto c = h.connect();
  CHECK(h.feed(c, "# from gateway 7\n\n") == "");
  CHECK_FALSE(c.awaiting_commit());
  std::string replies;
  c.report_ack(replies);
  CHECK(replies == "ok 2\n");  // nothing to store: no commit needed

  h.feed(c, "site,time,stage\ng1,2026-05-01T06:00:00Z,0.452\n# after the reading\n");
  replies.clear();
  c.report_ack(replies);
  CHECK(replies == "ok 3\n");  // the header; line 4 waits for the commit, and so does line 5
  CHECK(h.commit(c) == "ok 5\n");
  h.feed(c, "\n# later\n");
  replies.clear();
  c.report_ack(replies);
  CHECK(replies == "ok 7\n");
}

// ---- auth --------------------------------------------------------------------------------------

TEST_CASE("auth: the right secret opens the connection; the auth line is not numbered") {
  Harness h;
  auto c = h.connect(kWithSecret);
  CHECK_FALSE(c.authenticated());
  CHECK(h.feed(c, "auth " + std::string(kSecret) + "\n") == "");
  CHECK(c.authenticated());
  CHECK(h.feed(c, "site,time,stage\ng1,2026-05-01T06:00:00Z,0.452\n") == "");
  CHECK(c.lines() == 2);
  CHECK(h.commit(c) == "ok 2\n");
  CHECK(h.stored() == 1);
}

TEST_CASE("auth: a wrong secret is refused and nothing after it is read") {
  Harness h;
  auto c = h.connect(kWithSecret);
  const std::string wrong(kSecret.substr(0, kSecret.size() - 1));
  CHECK(h.feed(c, "auth " + wrong + "X\ng1,2026-05-01T06:00:00Z,0.452\n") ==
        "refused auth wrong secret\n");
  REQUIRE(c.refusal().has_value());
  CHECK_FALSE(c.authenticated());
  CHECK(h.feed(c, "g1,2026-05-01T06:01:00Z,0.455\n") == "");
  CHECK(c.lines() == 0);
  REQUIRE(h.ingestor->commit().has_value());
  CHECK(h.stored() == 0);
  CHECK(h.rejects() == 0);  // the auth line, holding a secret, is never stored
}

TEST_CASE("auth: a connection whose first line is not `auth` is refused") {
  Harness h;
  auto c = h.connect(kWithSecret);
  CHECK(h.feed(c, "site,time,stage\n") == "refused auth the first line must be: auth <secret>\n");
  CHECK(c.refusal().has_value());
  std::string replies;
  c.report_ack(replies);
  CHECK(replies == "");  // a refused connection is told nothing more
}

TEST_CASE("auth: without a secret, an auth line is allowed and ignored") {
  Harness h;
  auto c = h.connect(kPlain);
  CHECK(h.feed(c, "auth anything\ng1,2026-05-01T06:00:00Z,0.452\n") == "");
  CHECK(c.lines() == 1);
  CHECK(h.commit(c) == "ok 1\n");
  CHECK(h.stored() == 1);
}

TEST_CASE("same_secret compares whole strings") {
  CHECK(same_secret("0123456789abcdef", "0123456789abcdef"));
  CHECK_FALSE(same_secret("0123456789abcdeX", "0123456789abcdef"));
  CHECK_FALSE(same_secret("X123456789abcdef", "0123456789abcdef"));
  CHECK_FALSE(same_secret("0123456789abcde", "0123456789abcdef"));
  CHECK_FALSE(same_secret("0123456789abcdef0", "0123456789abcdef"));
  CHECK_FALSE(same_secret("", "0123456789abcdef"));
}

// ---- header or default columns -----------------------------------------------------------------

TEST_CASE("a header names the columns in any order") {
  Harness h;
  auto c = h.connect();
  CHECK(h.feed(c, "# columns\nstage,site,time\n0.452,g2,2026-05-01T06:00:00Z\n") == "");
  CHECK(h.commit(c) == "ok 3\n");
  CHECK(h.stored_at("g2", 0.452) == 1);
}

TEST_CASE("without a header the source's columns apply, and the first line is a reading") {
  Harness h;
  auto plain = h.connect(kPlain);
  CHECK(h.feed(plain, "\ng1,2026-05-01T06:00:00Z,0.452\r\ng1,2026-05-01T06:01:00Z,0.455\r\n") ==
        "");
  CHECK(h.commit(plain) == "ok 3\n");
  CHECK(h.stored() == 2);

  auto fixed = h.connect(kFixedSite);  // site: g1 -> the columns are time, stage
  CHECK(h.feed(fixed, "2026-05-01T06:02:00Z,0.458\n") == "");
  CHECK(h.commit(fixed) == "ok 1\n");
  CHECK(h.stored_at("g1", 0.458) == 1);
}

// ---- rejects, conflicts and repeats ------------------------------------------------------------

TEST_CASE("rejected lines are answered with `error` at once and kept in rejects") {
  Harness h;
  auto c = h.connect();
  const std::string replies = h.feed(c,
                                     "site,time,stage\n"
                                     "g1,2026-05-01T06:00:00Z,not-a-number\n"
                                     "g9,2026-05-01T06:00:00Z,0.4\n"
                                     "g1,yesterday,0.4\n"
                                     "g1,2026-05-01T06:01:00Z,1e308\n"
                                     "g1,2026-05-01T06:02:00Z,0.455\n");
  // One error line per rejected line, in order, naming its line and kind (docs/tcp-protocol.md,
  // "Service to client"). Line 5 parses, but its flow area, 2 m x 1e308 m, is past the largest
  // double (IEEE 754): the Ingestor rejects it as non_finite_stage. The reasons are the parser's
  // and the Ingestor's sentences; only their kinds are the protocol's.
  const std::vector<std::string> prefixes = {"error 2 bad_stage ", "error 3 unknown_site ",
                                             "error 4 bad_time ", "error 5 non_finite_stage "};
  std::vector<std::string> lines;
  for (std::size_t start = 0; start < replies.size();) {
    const std::size_t end = replies.find('\n', start);
    REQUIRE(end != std::string::npos);
    lines.push_back(replies.substr(start, end - start));
    start = end + 1;
  }
  CAPTURE(replies);
  REQUIRE(lines.size() == prefixes.size());
  for (std::size_t i = 0; i < lines.size(); ++i) CHECK(lines[i].starts_with(prefixes[i]));

  CHECK(h.commit(c) == "ok 6\n");  // rejects are stored: `ok` covers them too
  CHECK(h.stored() == 1);
  const auto rows = h.reject_rows();
  REQUIRE(rows.size() == 4);
  const std::vector<std::string> kinds = {"bad_stage", "unknown_site", "bad_time",
                                          "non_finite_stage"};
  for (std::size_t i = 0; i < rows.size(); ++i) {
    CHECK(rows[i].source == "tcp test");
    CHECK(rows[i].position == "line " + std::to_string(i + 2));
    CHECK(rows[i].reason.starts_with(kinds[i] + ": "));
  }
}

TEST_CASE("a conflict is answered `error <n> conflict`; a repeat is acknowledged quietly") {
  Harness h;
  auto first = h.connect();
  h.feed(first, "g1,2026-05-01T06:00:00Z,0.452\n");
  CHECK(h.commit(first) == "ok 1\n");

  auto second = h.connect();
  // The reason as docs/input.md, "Repeats and conflicts", shows it.
  CHECK(h.feed(second,
               "site,time,stage\n"
               "g1,2026-05-01T06:00:00Z,0.452\n"
               "g1,2026-05-01T06:00:00Z,0.7\n") ==
        "error 3 conflict conflict: g1 at this time is already stored with stage 0.452; the stored "
        "value is kept\n");
  CHECK(h.commit(second) == "ok 3\n");
  CHECK(h.stored() == 1);
  CHECK(h.count("SELECT count(*) FROM readings WHERE stage = 0.452") == 1);
  const auto rows = h.reject_rows();
  REQUIRE(rows.size() == 1);  // the repeat (line 2) is not a reject
  CHECK(rows[0].position == "line 3");
  CHECK(rows[0].reason.starts_with("conflict: "));
}

// ---- lines split anywhere, long lines ----------------------------------------------------------

// A small session: comment, blank, header, readings, a rejected line, CRLF and a last line without
// a newline (read at the client's end).
constexpr std::string_view kSmallInput =
    "# gw\n"
    "\n"
    "site,time,stage\r\n"
    "g1,2026-05-01T06:00:00Z,0.452\n"
    "g1,2026-05-01T06:01:00Z,x\n"
    "g2,2026-05-01T06:00:00Z,0.3\r\n"
    "g2,2026-05-01T06:01:00Z,0.31";

struct SessionResult {
  std::string replies;
  std::int64_t stored = 0;
  std::int64_t rejects = 0;
};

// Feeds kSmallInput in the given pieces, then finishes and commits.
SessionResult run_small(const std::vector<std::string_view>& pieces) {
  Harness h;
  auto c = h.connect();
  SessionResult out;
  for (const auto piece : pieces) out.replies += h.feed(c, piece);
  REQUIRE(c.finish(out.replies).has_value());
  out.replies += h.commit(c);
  out.stored = h.stored();
  out.rejects = h.rejects();
  return out;
}

TEST_CASE("the same replies whatever the byte at which the input is split") {
  const SessionResult whole = run_small({kSmallInput});
  // The protocol's reading of kSmallInput: line 5 has a bad stage, seven lines in all.
  CHECK(whole.replies.starts_with("error 5 bad_stage "));
  CHECK(whole.replies.ends_with("\nok 7\n"));
  CHECK(whole.stored == 3);
  CHECK(whole.rejects == 1);

  for (std::size_t at = 0; at <= kSmallInput.size(); ++at) {
    CAPTURE(at);
    const SessionResult split = run_small({kSmallInput.substr(0, at), kSmallInput.substr(at)});
    CHECK(split.replies == whole.replies);
    CHECK(split.stored == whole.stored);
    CHECK(split.rejects == whole.rejects);
  }
  std::vector<std::string_view> bytes;
  for (std::size_t i = 0; i < kSmallInput.size(); ++i) bytes.push_back(kSmallInput.substr(i, 1));
  const SessionResult one_by_one = run_small(bytes);
  CHECK(one_by_one.replies == whole.replies);
  CHECK(one_by_one.stored == whole.stored);
}

TEST_CASE("a line over max_line_bytes gets `error <n> too_long` as soon as it is known") {
  Harness h;
  auto c = h.connect();  // max_line_bytes: 64
  // 64 bytes exactly: spaces pad the stage field (docs/tcp-protocol.md: exactly the limit is read).
  std::string exact = "g1,2026-05-01T06:00:00Z,";
  exact += std::string(64 - exact.size() - 5, ' ') + "0.452";
  REQUIRE(exact.size() == 64);
  CHECK(h.feed(c, exact + "\n") == "");

  const std::string long_line = "g1,2026-05-01T06:01:00Z," + std::string(200, '9');
  const std::string first_part = long_line.substr(0, 100);  // no newline yet
  const std::string replies = h.feed(c, first_part);
  CHECK(replies.starts_with("error 2 too_long "));
  CHECK(h.feed(c, long_line.substr(100) + "\n") == "");  // once only
  CHECK(h.feed(c, "g1,2026-05-01T06:02:00Z,0.455\n") == "");
  CHECK(h.commit(c) == "ok 3\n");
  CHECK(h.stored() == 2);
  const auto rows = h.reject_rows();
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].position == "line 2");
  CHECK(rows[0].reason.starts_with("too_long: "));
}

// ---- store failures ----------------------------------------------------------------------------

TEST_CASE("a dropped batch closes the connections with lines in it; a resend stores them") {
  Harness h;
  auto c = h.connect();
  auto idle = h.connect();
  h.feed(idle, "# nothing stored on this one\n");
  h.feed(c, "site,time,stage\ng1,2026-05-01T06:00:00Z,0.452\n");
  CHECK(h.commit(c) == "ok 2\n");
  h.feed(c, "g1,2026-05-01T06:01:00Z,0.455\ng1,2026-05-01T06:02:00Z,0.458\n");

  REQUIRE(h.ingestor->reset().has_value());  // as after a failed commit
  std::string replies;
  CHECK(c.batch_dropped(replies));
  CHECK(replies == "closing the store failed; send again the lines after your last ok\n");
  CHECK(h.feed(c, "g1,2026-05-01T06:03:00Z,0.46\n") == "");  // nothing more is read
  std::string none;
  CHECK_FALSE(idle.batch_dropped(none));  // none of its lines was in the batch
  CHECK(none == "");
  CHECK(h.stored() == 1);

  // The client reconnects and sends the header and the lines after its last `ok`
  // (docs/tcp-protocol.md).
  auto again = h.connect();
  h.feed(again, "site,time,stage\ng1,2026-05-01T06:01:00Z,0.455\ng1,2026-05-01T06:02:00Z,0.458\n");
  CHECK(h.commit(again) == "ok 3\n");
  CHECK(h.stored() == 3);
}

TEST_CASE("an `ok` not yet sent goes out before the closing line of a dropped batch") {
  Harness h;
  auto c = h.connect();
  h.feed(c, "g1,2026-05-01T06:00:00Z,0.452\n");
  REQUIRE(h.ingestor->commit().has_value());
  c.committed();  // committed, but the `ok` not reported yet
  h.feed(c, "g1,2026-05-01T06:01:00Z,0.455\n");
  REQUIRE(h.ingestor->reset().has_value());
  std::string replies;
  CHECK(c.batch_dropped(replies));
  CHECK(replies == "ok 1\nclosing the store failed; send again the lines after your last ok\n");
}

TEST_CASE("a store failure while a line is taken fails the feed") {
  Harness h;
  auto c = h.connect();
  h.feed(c, "site,time,stage\n");
  // Every step of the store fails from now on: the reading cannot be stored.
  h.ingestor->store().set_step_hook_for_testing(
      [](std::string_view) { return std::optional<int>(SQLITE_IOERR); });
  std::string replies;
  auto fed = c.feed("g1,2026-05-01T06:00:00Z,0.452\n", replies);
  REQUIRE_FALSE(fed.has_value());
  CHECK(fed.error().kind == ErrorKind::database);
  CHECK(c.awaiting_commit());  // the line is not stored: the client must send it again
  CHECK(reply::store_failed() ==
        "closing the store failed; send again the lines after your last ok\n");
}

}  // namespace
}  // namespace stagewell
