// `http:` the status page, JSON API and metrics of the service (config.hpp, HttpSpec).
#include "config/http_keys.hpp"

#include "config/endpoint.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

void read_listen(const At& at, Context& cx, HttpSpec& out) {
  const auto endpoint = read_endpoint(at, cx);
  if (!endpoint) return;
  out.address = endpoint->address;
  out.port = endpoint->port;
  out.loopback = endpoint->loopback;
}

}  // namespace

void read_http(const At& at, Context& cx, Config& config) {
  static const std::vector<Key<HttpSpec>> keys{
      {"listen", defaults("127.0.0.1:8207"), read_listen},
      {"max_connections", defaults("32"), into(whole_number(1, 1000), &HttpSpec::max_connections)},
      {"max_connections_per_address", defaults("8"),
       into(whole_number(1, 1000), &HttpSpec::max_connections_per_address)},
      {"request_timeout", defaults("10s"),
       into(duration(Bounds::above(0.0).at_most(300.0)), &HttpSpec::request_timeout_s)},
      {"header_timeout", defaults("2s"),
       into(duration(Bounds::above(0.0).at_most(60.0)), &HttpSpec::header_timeout_s)},
  };
  HttpSpec spec;
  read_map(at, keys, cx, spec);
  config.http = spec;
}

}  // namespace stagewell::config_detail
