// A TCP client sending any bytes, in pieces of any size, to the tcp source's protocol core
// (tcp_intake.hpp) on a real Ingestor and database. Checked on every input, from the protocol as
// docs/tcp-protocol.md defines it ("Readings over TCP"):
//  - every reply is whole lines, each starting with ok, error, refused or closing;
//  - `ok <n>` never counts more lines than were sent, and never goes back;
//  - after `refused`, nothing more is read or answered;
//  - once the batch is committed, an accepted connection is told `ok` for every line it sent.
// Half the inputs end with a commit, half with the batch dropped (as after a failed commit).
#include <charconv>
#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "fuzz_support.hpp"
#include "stagewell/ingestor.hpp"
#include "stagewell/tcp_intake.hpp"

namespace {

using stagewell::fuzz::harness_failed;

void expect(bool holds, const char* what) {
  if (!holds) harness_failed(what);
}

constexpr std::int64_t kNow = 1'778'738'400'000;  // 2026-05-14T06:00:00Z

struct Service {
  stagewell::Config config;
  std::unique_ptr<stagewell::Ingestor> ingestor;

  Service() {
    const auto db = (stagewell::fuzz::scratch_dir() / "tcp.db").string();
    config = stagewell::fuzz::config_from(
        "units: metric\ndatabase: " + db +
        "\ntimezone: UTC\n"
        "sites:\n"
        "  - id: g1\n    section: {shape: rectangular, width: 1.0, height: 1.0}\n"
        "    roughness: 0.013\n    slope: 0.001\n"
        "    checks: {min_stage: 0, max_stage: 2, spike: 0.3, max_rate: 5}\n"
        "    alarms: {low_flow: {below: 0.05}, rising: {rate: 0.3}}\n"
        "  - id: p2\n    section: {shape: circular, diameter: 0.6}\n"
        "    roughness: 0.012\n    slope: 0.004\n"
        "sources:\n"
        "  - type: tcp\n    listen: 127.0.0.1:7301\n    max_line_bytes: 64\n"
        "  - type: tcp\n    listen: 127.0.0.1:7302\n    secret: fuzz-secret-0123456789\n"
        "  - type: tcp\n    listen: 127.0.0.1:7303\n    site: g1\n    time_zone: America/Denver\n");
    auto opened = stagewell::Ingestor::open(config, stagewell::IngestorOptions{}, [] { return kNow; });
    if (!opened) harness_failed(opened.error().message);
    ingestor = std::move(*opened);
  }
};

// Checks the replies added since `from`; returns the highest `ok` among them (or `last_ok`).
std::int64_t check_replies(std::string_view replies, std::int64_t last_ok, std::int64_t lines,
                           bool& refused) {
  expect(replies.empty() || replies.back() == '\n', "a reply that is not a whole line");
  while (!replies.empty()) {
    const auto end = replies.find('\n');
    const std::string_view line = replies.substr(0, end);
    replies.remove_prefix(end + 1);
    expect(!refused, "a reply after refused");
    if (line.starts_with("ok ")) {
      std::int64_t n = -1;
      const auto [ptr, ec] = std::from_chars(line.data() + 3, line.data() + line.size(), n);
      expect(ec == std::errc() && ptr == line.data() + line.size(), "an ok without a count");
      expect(n > last_ok, "an ok that does not move on");
      expect(n <= lines, "an ok for more lines than were sent");
      last_ok = n;
    } else if (line.starts_with("refused ")) {
      refused = true;
    } else {
      expect(line.starts_with("error ") || line.starts_with("closing "), "an unknown reply");
    }
  }
  return last_ok;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static Service service;
  if (size < 1) return 0;
  // The first byte: which source (plain, with a secret, with a fixed site), commit or drop at the
  // end, and the size of the pieces the bytes arrive in.
  const unsigned choice = data[0];
  const std::size_t source = (choice & 3) % 3;
  const bool commit = (choice & 4) != 0;
  const std::size_t piece = 1 + (choice >> 3);
  const std::string_view bytes(reinterpret_cast<const char*>(data + 1), size - 1);

  auto intake = stagewell::TcpIntake::create(service.config.sources.at(source), "tcp fuzz",
                                             *service.ingestor);
  if (!intake) harness_failed(intake.error().message);
  std::int64_t last_ok = 0;
  bool refused = false;
  std::string replies;
  for (std::size_t at = 0; at < bytes.size(); at += piece) {
    replies.clear();
    if (!intake->feed(bytes.substr(at, piece), replies)) harness_failed("the store failed");
    last_ok = check_replies(replies, last_ok, intake->lines(), refused);
  }
  replies.clear();
  if (!intake->finish(replies)) harness_failed("the store failed");
  last_ok = check_replies(replies, last_ok, intake->lines(), refused);

  replies.clear();
  if (commit) {
    if (!service.ingestor->commit()) harness_failed("a commit failed");
    intake->committed();
    intake->report_ack(replies);
    last_ok = check_replies(replies, last_ok, intake->lines(), refused);
    if (!refused && intake->authenticated()) {
      expect(last_ok == intake->lines() || intake->lines() == 0,
             "a committed connection not told ok for every line");
    }
  } else {
    if (!service.ingestor->reset()) harness_failed("a reset failed");
    (void)intake->batch_dropped(replies);
    check_replies(replies, last_ok, intake->lines(), refused);
  }
  return 0;
}
