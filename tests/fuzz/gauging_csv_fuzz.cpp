// A gaugings CSV of any bytes through parse_gaugings_csv (gauging_csv.hpp). Checked on every input,
// from the header's documented contract:
//  - every gauging names a configured site, has a finite discharge >= 0 (times the factor), a
//    finite stage when it has one and an uncertainty in (0, 100] when it has one;
//  - gaugings and errors together have strictly increasing line numbers, each error a reason;
//  - the same bytes parse the same way twice (no hidden state).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "fuzz_support.hpp"
#include "stagewell/gauging_csv.hpp"

namespace {

using stagewell::fuzz::harness_failed;

void expect(bool holds, const char* what) {
  if (!holds) harness_failed(what);
}

bool known(std::string_view site) { return site == "g1" || site == "canal-2"; }

std::string summary(const stagewell::GaugingsCsv& parsed) {
  std::string out;
  for (const auto& g : parsed.gaugings) {
    out += "G" + std::to_string(g.line_number) + " " + std::to_string(g.time_ms) + " " +
           std::to_string(g.discharge) + "\n";
  }
  for (const auto& e : parsed.errors) out += "E" + std::to_string(e.line_number) + "\n";
  return out;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  // The first byte chooses the discharge factor (as --flow-units would); the rest is the file.
  const double factor = (data[0] & 1) ? 0.001 : 1.0;
  const std::string_view text(reinterpret_cast<const char*>(data + 1), size - 1);
  const stagewell::GaugingCsvOptions options{.known_site = known, .discharge_factor = factor};
  const auto parsed = stagewell::parse_gaugings_csv(text, options);
  const auto again = stagewell::parse_gaugings_csv(text, options);
  expect(parsed.has_value() == again.has_value(), "the same bytes parsed two ways");
  if (!parsed) {
    expect(!parsed.error().message.empty(), "a refusal without a message");
    return 0;
  }
  expect(summary(*parsed) == summary(*again), "the same bytes parsed two ways");
  for (const auto& g : parsed->gaugings) {
    expect(known(g.site), "a gauging of a site that is not configured");
    expect(std::isfinite(g.discharge) && g.discharge >= 0.0, "a discharge not finite or < 0");
    expect(!g.stage || std::isfinite(*g.stage), "a stage that is not finite");
    expect(!g.uncertainty || (*g.uncertainty > 0.0 && *g.uncertainty <= 100.0),
           "an uncertainty outside (0, 100]");
  }
  for (const auto& e : parsed->errors) expect(!e.reason.empty(), "an error without a reason");
  // Line numbers: merge both lists in order, strictly increasing.
  std::size_t gi = 0, ei = 0;
  std::int64_t last = 0;
  while (gi < parsed->gaugings.size() || ei < parsed->errors.size()) {
    const bool take_gauging =
        ei == parsed->errors.size() ||
        (gi < parsed->gaugings.size() &&
         parsed->gaugings[gi].line_number < parsed->errors[ei].line_number);
    const std::int64_t number =
        take_gauging ? parsed->gaugings[gi++].line_number : parsed->errors[ei++].line_number;
    expect(number > last, "line numbers did not grow");
    last = number;
  }
  return 0;
}
