// Helpers shared by the store tests: a scratch directory, a site with a configuration, and a "fail
// the Nth step" hook. A raw connection for looking at the file from outside: raw_connection.hpp.
#pragma once

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/store.hpp"

namespace stagewell::test {

// A fresh directory under the system's temporary directory, removed with everything in it.
class TempDir {
 public:
  TempDir() {
    std::string pattern = (std::filesystem::temp_directory_path() / "stagewell-store-XXXXXX");
    REQUIRE(mkdtemp(pattern.data()) != nullptr);
    path_ = pattern;
  }
  ~TempDir() {
    std::error_code ignored;
    std::filesystem::remove_all(path_, ignored);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::filesystem::path& path() const { return path_; }
  std::filesystem::path db() const { return path_ / "stagewell.db"; }

 private:
  std::filesystem::path path_;
};

inline Store open_store(const std::filesystem::path& path, const StoreOptions& options = {}) {
  auto store = Store::open(path, options);
  REQUIRE_MESSAGE(store.has_value(), store.error().message);
  return std::move(*store);
}

// A site with one recorded configuration, ready for readings.
struct Site {
  SiteKey key;
  ConfigVersionId config;
};

inline Site add_site(Store& store, std::string_view id) {
  auto key = store.sites().ensure(id);
  REQUIRE_MESSAGE(key.has_value(), key.error().message);
  const std::string json = "{\"id\":\"" + std::string(id) + "\"}";
  // Depth = stage - 0.1, as reading() below says.
  auto config = store.versions().record(*key, json, 1'700'000'000'000,
                                        DepthTerms{.zero_flow = 0.1, .correction = {}});
  REQUIRE_MESSAGE(config.has_value(), config.error().message);
  return Site{*key, *config};
}

inline StoredReading reading(const Site& site, std::int64_t time_ms, double stage) {
  return StoredReading{.site = site.key,
                       .time_ms = time_ms,
                       .stage = stage,
                       .depth = stage - 0.1,
                       .discharge = stage * 2.0,
                       .flags = Flags{},
                       .config = site.config};
}

// Makes the Nth step of a statement (counting from 1) on a connection fail with `code`; every other
// step runs normally. Copies share the count.
class FailNthStep {
 public:
  FailNthStep(int n, int code) : n_(n), code_(code), calls_(std::make_shared<int>(0)) {}
  std::optional<int> operator()(std::string_view) const {
    return ++*calls_ == n_ ? std::optional<int>(code_) : std::nullopt;
  }
  int calls() const { return *calls_; }

 private:
  int n_;
  int code_;
  std::shared_ptr<int> calls_;
};

}  // namespace stagewell::test
