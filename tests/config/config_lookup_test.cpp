// Where `stagewell` finds its configuration when --config is absent: $STAGEWELL_CONFIG alone when
// set, else $XDG_CONFIG_HOME/stagewell/config.yaml, with $HOME/.config in place of an unset,
// empty or relative XDG_CONFIG_HOME (XDG Base Directory Specification, "Environment variables"),
// then the system file /etc/stagewell/stagewell.yaml (Filesystem Hierarchy Standard 3.0, 3.7:
// host-specific configuration in /etc).
#include <doctest/doctest.h>

#include <map>
#include <string>

#include "stagewell/config.hpp"

namespace stagewell {
namespace {

using Paths = std::vector<std::filesystem::path>;

ConfigCandidates with(std::map<std::string, std::string> variables) {
  return user_config_candidates([variables](const char* name) -> std::optional<std::string> {
    const auto it = variables.find(name);
    if (it == variables.end()) return std::nullopt;
    return it->second;
  });
}

TEST_CASE("STAGEWELL_CONFIG, when set, is the only place looked at") {
  const auto found = with({{"STAGEWELL_CONFIG", "/srv/plant/stagewell.yaml"},
                           {"XDG_CONFIG_HOME", "/home/op/.cfg"},
                           {"HOME", "/home/op"}});
  CHECK(found.from_variable);
  CHECK(found.paths == Paths{"/srv/plant/stagewell.yaml"});
}

TEST_CASE("then the user's configuration directory, then the system file") {
  const auto found = with({{"XDG_CONFIG_HOME", "/home/op/.cfg"}, {"HOME", "/home/op"}});
  CHECK_FALSE(found.from_variable);
  CHECK(found.paths ==
        Paths{"/home/op/.cfg/stagewell/config.yaml", "/etc/stagewell/stagewell.yaml"});
}

TEST_CASE("XDG_CONFIG_HOME unset, empty or relative: $HOME/.config") {
  const Paths want{"/home/op/.config/stagewell/config.yaml", "/etc/stagewell/stagewell.yaml"};
  CHECK(with({{"HOME", "/home/op"}}).paths == want);
  CHECK(with({{"XDG_CONFIG_HOME", ""}, {"HOME", "/home/op"}}).paths == want);
  CHECK(with({{"XDG_CONFIG_HOME", "relative/dir"}, {"HOME", "/home/op"}}).paths == want);
  // An empty STAGEWELL_CONFIG counts as unset.
  CHECK(with({{"STAGEWELL_CONFIG", ""}, {"HOME", "/home/op"}}).paths == want);
}

TEST_CASE("no HOME and no XDG_CONFIG_HOME (a system account): the system file only") {
  CHECK(with({}).paths == Paths{"/etc/stagewell/stagewell.yaml"});
}

}  // namespace
}  // namespace stagewell
