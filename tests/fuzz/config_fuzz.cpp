// A configuration file of any bytes through the loader (config.hpp): every input is read in
// bounded time and memory (libFuzzer's -timeout and -rss_limit_mb fail the run otherwise) and
// ends in a configuration or in errors that say something. For an accepted configuration, each
// site's channel is built and computes, by Manning's equation, a finite, non-negative discharge at
// depths across its section; where the normal depth of that discharge is found, it carries the
// same discharge again (its definition).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "fuzz_support.hpp"
#include "stagewell/channel.hpp"

namespace {

void expect(bool holds, const char* what) {
  if (!holds) stagewell::fuzz::harness_failed(what);
}

void check_channel(const stagewell::Channel& channel) {
  const double top = channel.section().top_depth();
  for (double fraction : {0.01, 0.25, 0.5, 0.9, 1.0}) {
    const double depth = fraction * top;
    const double discharge = channel.discharge(depth);
    expect(std::isfinite(discharge) && discharge >= 0.0, "a discharge not finite or negative");
    expect(channel.at_depth(depth).discharge == discharge,
           "at_depth and discharge disagree at the same depth");
    const auto normal = channel.normal_depth(discharge);
    if (normal && discharge > 0.0 && std::isnormal(discharge)) {
      const double again = channel.discharge(*normal);
      expect(std::fabs(again - discharge) <= 1e-6 * discharge,
             "the normal depth of a discharge does not carry that discharge");
    }
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  const auto config = stagewell::parse_config(text, "fuzz.yaml", stagewell::fuzz::scratch_dir());
  if (!config) {
    expect(!config.error().empty(), "a refused configuration without an error");
    for (const auto& error : config.error()) {
      expect(!error.message.empty(), "an error without a message");
      (void)error.to_string();
    }
    return 0;
  }
  for (const auto& site : config->sites) {
    const auto channel = stagewell::make_channel(site, config->units);
    expect(channel != nullptr, "validation accepted a section that make_channel refuses");
    check_channel(*channel);
  }
  return 0;
}
