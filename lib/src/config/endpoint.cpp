// ADDRESS:PORT as the listeners of the configuration write it (tcp sources, the http server).
#include "config/endpoint.hpp"

#include <arpa/inet.h>

#include <charconv>

#include "config/value_readers.hpp"

namespace stagewell::config_detail {

// "127.0.0.1:7207", "[::1]:7207", "0.0.0.0:7207". Names are not resolved: a listener binds to an
// address, and a name that resolves differently tomorrow would move it.
std::optional<Endpoint> parse_endpoint(std::string_view text) {
  const auto colon = text.rfind(':');
  if (colon == std::string_view::npos) return std::nullopt;
  std::string_view host = text.substr(0, colon);
  const std::string_view port_text = text.substr(colon + 1);
  Endpoint out;
  const auto [end, ec] =
      std::from_chars(port_text.data(), port_text.data() + port_text.size(), out.port);
  if (ec != std::errc() || end != port_text.data() + port_text.size() || out.port < 1 ||
      out.port > 65535) {
    return std::nullopt;
  }
  if (host.size() >= 2 && host.front() == '[' && host.back() == ']') {
    out.address = std::string(host.substr(1, host.size() - 2));
    in6_addr v6{};
    if (::inet_pton(AF_INET6, out.address.c_str(), &v6) != 1) return std::nullopt;
    out.loopback = IN6_IS_ADDR_LOOPBACK(&v6);
    out.every_address = IN6_IS_ADDR_UNSPECIFIED(&v6);
    return out;
  }
  out.address = std::string(host);
  in_addr v4{};
  if (::inet_pton(AF_INET, out.address.c_str(), &v4) != 1) return std::nullopt;
  const std::uint32_t host_order = ntohl(v4.s_addr);
  out.loopback = (host_order >> 24) == 127;  // 127.0.0.0/8 (RFC 1122, 3.2.1.3)
  out.every_address = host_order == 0;
  return out;
}

std::optional<Endpoint> read_endpoint(const At& at, Context& cx) {
  const auto text = scalar(at, cx, "ADDRESS:PORT");
  if (!text) return std::nullopt;
  auto endpoint = parse_endpoint(*text);
  if (!endpoint) {
    cx.error(at,
             "must be ADDRESS:PORT: an IPv4 address (127.0.0.1), or an IPv6 address in "
             "brackets ([::1]), and a port from 1 to 65535");
  }
  return endpoint;
}

}  // namespace stagewell::config_detail
