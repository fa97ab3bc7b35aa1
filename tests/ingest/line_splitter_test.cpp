// LineSplitter: the same text cut into chunks at every possible place gives the same lines; a
// line over the limit is one report and its bytes are dropped up to the next newline.
#include "stagewell/line_splitter.hpp"

#include <doctest/doctest.h>

#include <string>
#include <vector>

namespace stagewell {
namespace {

struct Seen {
  std::string text;
  std::int64_t number;
  bool too_long;
  friend bool operator==(const Seen&, const Seen&) = default;
};

std::vector<Seen> split(std::string_view text, std::vector<std::size_t> cuts, std::size_t limit) {
  LineSplitter splitter(limit);
  std::vector<Seen> seen;
  const LineSink sink = [&](const Line& line) {
    seen.push_back(Seen{std::string(line.text), line.number, line.too_long});
    CHECK(splitter.pending_bytes() <= limit + 1);
  };
  std::size_t start = 0;
  cuts.push_back(text.size());
  for (std::size_t cut : cuts) {
    splitter.feed(text.substr(start, cut - start), sink);
    CHECK(splitter.pending_bytes() <= limit + 1);
    start = cut;
  }
  splitter.finish(sink);
  return seen;
}

TEST_CASE("lines in one chunk, LF and CRLF, last line without newline") {
  const auto seen = split("a,b\r\n\nc\n#x\r\nlast", {}, 100);
  const std::vector<Seen> expected{
      {"a,b", 1, false}, {"", 2, false}, {"c", 3, false}, {"#x", 4, false}, {"last", 5, false}};
  CHECK(seen == expected);
}

TEST_CASE("every way of cutting the stream into two or three chunks gives the same lines") {
  const std::string text = "site,time,stage\r\nweir-1,2026-03-01T06:15:00Z,1.25\n\nx\r\n";
  const std::vector<Seen> expected{{"site,time,stage", 1, false},
                                   {"weir-1,2026-03-01T06:15:00Z,1.25", 2, false},
                                   {"", 3, false},
                                   {"x", 4, false}};
  for (std::size_t first = 0; first <= text.size(); ++first) {
    CAPTURE(first);
    CHECK(split(text, {first}, 64) == expected);
    for (std::size_t second = first; second <= text.size(); second += 3) {
      CAPTURE(second);
      CHECK(split(text, {first, second}, 64) == expected);
    }
  }
}

TEST_CASE("byte-at-a-time feeding") {
  const std::string text = "ab\r\ncd\n";
  std::vector<std::size_t> cuts;
  for (std::size_t i = 1; i < text.size(); ++i) cuts.push_back(i);
  const std::vector<Seen> expected{{"ab", 1, false}, {"cd", 2, false}};
  CHECK(split(text, cuts, 8) == expected);
}

TEST_CASE("the length limit counts content only, not the line ending") {
  // Exactly at the limit (4 bytes), with LF or CRLF, and with the '\r' arriving alone.
  const std::vector<Seen> expected{{"abcd", 1, false}, {"efgh", 2, false}};
  CHECK(split("abcd\nefgh\r\n", {}, 4) == expected);
  CHECK(split("abcd\nefgh\r\n", {9, 10}, 4) == expected);
  CHECK(split("abcd\nefgh\r\n", {8, 9, 10}, 4) == expected);
}

TEST_CASE("an over-long line is one reject and is discarded up to the next newline") {
  // 10 bytes with a limit of 4: reported once with its first 4 bytes, numbering goes on.
  const std::string text = "ok\n0123456789\nnext\r\n";
  const std::vector<Seen> expected{{"ok", 1, false}, {"0123", 2, true}, {"next", 3, false}};
  for (std::size_t cut = 0; cut <= text.size(); ++cut) {
    CAPTURE(cut);
    CHECK(split(text, {cut}, 4) == expected);
  }
  std::vector<std::size_t> bytes;
  for (std::size_t i = 1; i < text.size(); ++i) bytes.push_back(i);
  CHECK(split(text, bytes, 4) == expected);
}

TEST_CASE("one byte over the limit is too long; a lone '\\r' inside a line counts") {
  CHECK(split("abcde\n", {}, 4) == std::vector<Seen>{{"abcd", 1, true}});
  CHECK(split("abc\rd\n", {}, 4) == std::vector<Seen>{{"abc\r", 1, true}});
  CHECK(split("abcd\rx\n", {5}, 4) == std::vector<Seen>{{"abcd", 1, true}});
}

TEST_CASE("a huge line without a newline is reported once and never buffered") {
  LineSplitter splitter(16);
  int reports = 0;
  const LineSink sink = [&](const Line& line) {
    CHECK(line.too_long);
    CHECK(line.text.size() == 16);
    ++reports;
  };
  const std::string chunk(1000, 'x');
  for (int i = 0; i < 100; ++i) {
    splitter.feed(chunk, sink);
    CHECK(splitter.pending_bytes() <= 17);
  }
  splitter.finish(sink);
  CHECK(reports == 1);
}

TEST_CASE("the default limit is 4096 bytes") {
  CHECK(LineSplitter().max_line_bytes() == 4096);
  const std::string at_limit(4096, 'a');
  CHECK(split(at_limit + "\n", {}, kDefaultMaxLineBytes).front().too_long == false);
  CHECK(split(at_limit + "a\n", {}, kDefaultMaxLineBytes).front().too_long == true);
}

}  // namespace
}  // namespace stagewell
