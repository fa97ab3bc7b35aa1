// What the fuzz targets share: a scratch directory made once per process, a configuration read
// from text, and a stop with a message when the harness itself cannot be set up (that is a broken
// harness, not a finding).
#pragma once

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <string_view>

#include "stagewell/config.hpp"

namespace stagewell::fuzz {

[[noreturn]] inline void harness_failed(std::string_view what) {
  std::fprintf(stderr, "fuzz harness: %.*s\n", static_cast<int>(what.size()), what.data());
  std::abort();
}

// A fresh directory under $TMPDIR (or /tmp), removed when the process ends normally.
inline const std::filesystem::path& scratch_dir() {
  static const std::filesystem::path dir = [] {
    const char* tmp = std::getenv("TMPDIR");
    std::string pattern = std::string(tmp && *tmp ? tmp : "/tmp") + "/stagewell-fuzz-XXXXXX";
    if (mkdtemp(pattern.data()) == nullptr) harness_failed("cannot make a scratch directory");
    std::atexit([] {
      std::error_code ignored;
      std::filesystem::remove_all(scratch_dir(), ignored);
    });
    return std::filesystem::path(pattern);
  }();
  return dir;
}

// A configuration the harness needs; its errors stop the harness.
inline Config config_from(const std::string& yaml) {
  auto config = parse_config(yaml, "fuzz.yaml", scratch_dir());
  if (!config) harness_failed(config.error().front().to_string());
  return std::move(*config);
}

}  // namespace stagewell::fuzz
