// Per-line cost of reading CSV readings: the whole record parser (RecordParser::parse_line) on
// the lines the ingest benchmark writes, and its parts (text check, CSV split, timestamp, number),
// plus the line splitter. Lines cycle through 4096 different invented readings
// (synthetic_stage.hpp), so no one line sits in the branch predictor.
//
//   build-bench/tests/bench/records_bench [--benchmark_filter=REGEX]
#include <benchmark/benchmark.h>

#include <charconv>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/csv.hpp"
#include "stagewell/line_splitter.hpp"
#include "stagewell/records.hpp"
#include "stagewell/timestamp.hpp"
#include "synthetic_stage.hpp"

namespace {

using namespace stagewell;

constexpr std::size_t kLines = 4096;  // a power of two: the index wraps with a mask

// "raceway-a,2024-01-01T00:00:00Z,0.553" (no newline)
const std::vector<std::string>& site_lines() {
  static const std::vector<std::string> lines = [] {
    bench::StageSeries series;
    std::vector<std::string> out;
    for (std::size_t i = 0; i < kLines; ++i) {
      std::string line;
      bench::append_csv_line(line, series.next());
      line.pop_back();
      out.push_back(std::move(line));
    }
    return out;
  }();
  return lines;
}

// "2024-01-01 00:00:00,0.553": a logger with a fixed site writing local time.
const std::vector<std::string>& local_time_lines() {
  static const std::vector<std::string> lines = [] {
    std::vector<std::string> out;
    for (const auto& line : site_lines()) {
      const auto first = line.find(',');
      std::string rest = line.substr(first + 1);
      rest[10] = ' ';                   // the 'T'
      rest.erase(rest.find('Z'), 1);    // no offset
      out.push_back(std::move(rest));
    }
    return out;
  }();
  return lines;
}

bool known_site(std::string_view site) {
  for (const auto& series : bench::kSeries) {
    if (series.id == site) return true;
  }
  return false;
}

RecordParser header_parsed(const SourceSpec& spec, std::string_view header) {
  auto parser = RecordParser::create(spec, known_site);
  if (!parser) std::abort();
  const auto parsed = parser->parse_line(Line{header, 1, false});
  if (!std::holds_alternative<ColumnMap>(parsed)) std::abort();
  return std::move(*parser);
}

void run_parser(benchmark::State& state, RecordParser parser,
                const std::vector<std::string>& lines) {
  std::size_t i = 0;
  std::int64_t number = 2;
  for (auto _ : state) {
    const auto parsed = parser.parse_line(Line{lines[i], number++, false});
    if (!std::holds_alternative<Record>(parsed)) state.SkipWithError("a line was not a record");
    benchmark::DoNotOptimize(parsed);
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}

void BM_parse_line_site_column_utc(benchmark::State& state) {
  run_parser(state, header_parsed(SourceSpec{}, "site,time,stage"), site_lines());
}
BENCHMARK(BM_parse_line_site_column_utc);

void BM_parse_line_fixed_site_local_time(benchmark::State& state) {
  SourceSpec spec;
  spec.site = "raceway-a";
  spec.time_zone = "America/Denver";
  run_parser(state, header_parsed(spec, "time,stage"), local_time_lines());
}
BENCHMARK(BM_parse_line_fixed_site_local_time);

void BM_text_problem(benchmark::State& state) {
  const auto& lines = site_lines();
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(text_problem(lines[i]));
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_text_problem);

void BM_split_csv_line(benchmark::State& state) {
  const auto& lines = site_lines();
  std::vector<CsvField> fields;
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(split_csv_line(lines[i], fields));
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_split_csv_line);

void BM_parse_timestamp_utc(benchmark::State& state) {
  std::vector<std::string> times;
  for (const auto& line : site_lines()) times.push_back(line.substr(line.find(',') + 1, 20));
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(parse_timestamp(times[i], nullptr));
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_parse_timestamp_utc);

void BM_parse_timestamp_local(benchmark::State& state) {
  auto zone = TimeZone::parse("America/Denver");
  if (!zone) std::abort();
  std::vector<std::string> times;
  for (const auto& line : local_time_lines()) times.push_back(line.substr(0, 19));
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(parse_timestamp(times[i], &*zone));
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_parse_timestamp_local);

void BM_stage_from_chars(benchmark::State& state) {
  std::vector<std::string> stages;
  for (const auto& line : site_lines()) stages.push_back(line.substr(line.rfind(',') + 1));
  std::size_t i = 0;
  for (auto _ : state) {
    double stage = 0.0;
    const auto& text = stages[i];
    benchmark::DoNotOptimize(std::from_chars(text.data(), text.data() + text.size(), stage));
    benchmark::DoNotOptimize(stage);
    i = (i + 1) & (kLines - 1);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_stage_from_chars);

// Lines out of 64 KiB reads (kReadChunkBytes), the size FileReader reads.
void BM_line_splitter(benchmark::State& state) {
  std::string text;
  for (const auto& line : site_lines()) text += line + '\n';
  while (text.size() < 64 * 1024) text += text;
  text.resize(64 * 1024);
  std::int64_t lines = 0;
  LineSplitter splitter;
  for (auto _ : state) {
    splitter.feed(text, [&lines](const Line& line) {
      benchmark::DoNotOptimize(line.text.data());
      ++lines;
    });
  }
  state.SetItemsProcessed(lines);
}
BENCHMARK(BM_line_splitter);

}  // namespace

BENCHMARK_MAIN();
