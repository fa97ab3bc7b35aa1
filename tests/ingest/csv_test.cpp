// CSV fields within one line (RFC 4180 section 2 rules 4-7, restricted to a line) and the text
// check. Expected field splits follow RFC 4180's grammar, written out by hand.
#include "stagewell/csv.hpp"

#include <doctest/doctest.h>

#include <string>
#include <vector>

namespace stagewell {
namespace {

std::vector<std::string> fields_of(std::string_view line) {
  std::vector<CsvField> fields;
  auto split = split_csv_line(line, fields);
  REQUIRE_MESSAGE(split.has_value(), split.error().message);
  std::vector<std::string> texts;
  std::string scratch;
  for (const auto& field : fields) texts.emplace_back(field_text(field, scratch));
  return texts;
}

CsvSyntaxError error_of(std::string_view line) {
  std::vector<CsvField> fields;
  auto split = split_csv_line(line, fields);
  REQUIRE(!split.has_value());
  return split.error();
}

using Texts = std::vector<std::string>;

TEST_CASE("plain fields, empty fields, trailing comma") {
  CHECK(fields_of("a,b,c") == Texts{"a", "b", "c"});
  CHECK(fields_of("") == Texts{""});
  CHECK(fields_of("a,,c,") == Texts{"a", "", "c", ""});
  CHECK(fields_of(" a ,\tb\t") == Texts{"a", "b"});  // blanks around unquoted fields dropped
}

TEST_CASE("quoted fields: commas inside, doubled quotes, blanks kept inside") {
  CHECK(fields_of(R"("a,b",c)") == Texts{"a,b", "c"});
  CHECK(fields_of(R"("say ""hi""",x)") == Texts{R"(say "hi")", "x"});
  CHECK(fields_of(R"("",x)") == Texts{"", "x"});
  CHECK(fields_of(R"("""")") == Texts{R"(")"});
  CHECK(fields_of(R"( " a " , "b")") == Texts{" a ", "b"});
}

TEST_CASE("quoting mistakes name the field") {
  auto open = error_of(R"(a,"b,c)");
  CHECK(open.field_index == 1);
  CHECK(open.message.find("field 2") != std::string::npos);
  CHECK(open.message.find("not closed") != std::string::npos);

  auto after = error_of(R"("a"x,b)");
  CHECK(after.field_index == 0);
  CHECK(after.message.find("after its closing quote") != std::string::npos);

  auto inside = error_of(R"(a,b"c,d)");
  CHECK(inside.field_index == 1);
  CHECK(inside.message.find("quote inside") != std::string::npos);
}

TEST_CASE("the fields vector is reused") {
  std::vector<CsvField> fields;
  REQUIRE(split_csv_line("a,b,c,d", fields));
  const auto capacity = fields.capacity();
  REQUIRE(split_csv_line("e,f", fields));
  CHECK(fields.size() == 2);
  CHECK(fields.capacity() == capacity);
}

TEST_CASE("text check: UTF-8 text and tabs pass") {
  CHECK_FALSE(text_problem("weir-1,2026-03-01T06:15:00Z,1.25"));
  CHECK_FALSE(text_problem("a\tb"));
  CHECK_FALSE(text_problem("Ober\xC3\xA9 \xE2\x82\xAC \xF0\x9F\x8C\x8A"));  // é, euro sign, emoji
}

TEST_CASE("text check: NUL, control characters, invalid UTF-8 (Unicode 15, table 3-7)") {
  const auto says = [](std::string_view line, std::string_view part) {
    const auto problem = text_problem(line);
    REQUIRE(problem.has_value());
    CHECK_MESSAGE(problem->find(part) != std::string::npos, *problem);
  };
  says(std::string_view("ab\0c", 4), "NUL byte at byte 3");
  says("a\x01", "control character 0x01 at byte 2");
  says("a\rb", "control character 0x0D");
  says("\x7F", "control character 0x7F");
  says("\xC2\x85", "control character U+0085");  // C1 NEL
  says("\xFF", "invalid UTF-8 at byte 1");
  says("ab\x80", "invalid UTF-8 at byte 3");  // lone continuation byte
  says("\xC3", "invalid UTF-8");              // truncated sequence
  says("\xC0\xAF", "invalid UTF-8");          // overlong '/'
  says("\xE0\x80\xAF", "invalid UTF-8");      // overlong '/'
  says("\xED\xA0\x80", "invalid UTF-8");      // UTF-16 surrogate U+D800
  says("\xF4\x90\x80\x80", "invalid UTF-8");  // U+110000, past Unicode
  says("\xC3\x28", "invalid UTF-8");          // bad continuation
}

}  // namespace
}  // namespace stagewell
