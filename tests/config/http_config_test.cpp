// The `http:` key: absent means no server; written, its listen address and limits are read and
// checked, and mistakes are reported with file:line:col.
#include <doctest/doctest.h>

#include "config_test_support.hpp"

using stagewell::test::errors_of;
using stagewell::test::expect_one_error;
using stagewell::test::listing;

namespace {

stagewell::ConfigResult load(std::string_view tail) {
  return stagewell::test::parse_after_one_site(tail);
}

}  // namespace

TEST_CASE("no http key: no server") {
  const auto config = load("");
  REQUIRE(config);
  CHECK_FALSE(config->http.has_value());
}

TEST_CASE("an empty http map turns the server on with the defaults") {
  const auto config = load("http: {}\n");
  REQUIRE(config);
  REQUIRE(config->http.has_value());
  CHECK(config->http->address == "127.0.0.1");
  CHECK(config->http->port == 8207);
  CHECK(config->http->loopback);
  CHECK(config->http->max_connections == 32);
  CHECK(config->http->request_timeout_s == doctest::Approx(10.0));
}

TEST_CASE("listen, limits and a non-loopback address") {
  const auto config =
      load("http:\n  listen: 0.0.0.0:9000\n  max_connections: 5\n  request_timeout: 1m\n");
  REQUIRE(config);
  CHECK(config->http->address == "0.0.0.0");
  CHECK(config->http->port == 9000);
  CHECK_FALSE(config->http->loopback);  // allowed; the service logs a warning
  CHECK(config->http->max_connections == 5);
  CHECK(config->http->request_timeout_s == doctest::Approx(60.0));
}

TEST_CASE("IPv6 loopback in brackets") {
  const auto config = load("http: {listen: \"[::1]:8300\"}\n");
  REQUIRE(config);
  CHECK(config->http->address == "::1");
  CHECK(config->http->loopback);
}

TEST_CASE("a listen address without a port is an error on its line and column") {
  // "listen" on line 9; its value starts at column 11 (1-based).
  expect_one_error(std::string(stagewell::test::kOneSiteLines) + "http:                    # 8\n  listen: localhost # 9\n",
                   9, "test.yaml:9:11: http.listen = localhost: must be ADDRESS:PORT");
}

TEST_CASE("a port out of range, an unknown key and a zero limit are each reported") {
  const auto errors = errors_of(std::string(stagewell::test::kOneSiteLines) +
                                "http:                    # 8\n"
                                "  listen: 127.0.0.1:70000 # 9\n"
                                "  max_conections: 3      # 10\n"
                                "  request_timeout: 0s    # 11\n");
  INFO(listing(errors));
  CHECK(errors.size() == 3);
  CHECK(stagewell::test::has_error(errors, 9, "port from 1 to 65535"));
  CHECK(stagewell::test::has_error(errors, 10, "max_conections"));
  CHECK(stagewell::test::has_error(errors, 11, "request_timeout = 0s"));
}
