// A listening address as the configuration writes it: "127.0.0.1:7207", "[::1]:7207",
// "0.0.0.0:7207". Used by tcp sources and the http server.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace stagewell::config_detail {

struct Endpoint {
  std::string address;  // without brackets
  int port = 0;         // 1 to 65535
  bool loopback = false;
  bool every_address = false;  // 0.0.0.0 or ::
};

// nullopt unless `text` is an IPv4 address, or an IPv6 address in brackets, ':' and a port.
// Names are not resolved: a listener binds to an address, and a name that resolves differently
// tomorrow would move it.
std::optional<Endpoint> parse_endpoint(std::string_view text);

struct At;
class Context;
// Reads a `listen:` value; reports at `at` and returns nullopt when it is not an endpoint.
std::optional<Endpoint> read_endpoint(const At& at, Context& cx);

}  // namespace stagewell::config_detail
