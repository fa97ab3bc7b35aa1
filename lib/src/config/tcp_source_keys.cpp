// A tcp source's keys. The secret may be written inline, or kept out of the configuration in a
// file or an environment variable; it is read here, once per load, and never quoted in a message.
#include "config/tcp_source_keys.hpp"

#include <arpa/inet.h>
#include <fmt/format.h>

#include <cerrno>
#include <charconv>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <optional>
#include <string>
#include <string_view>

#include "config/endpoint.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

// A secret is sent as the rest of the line `auth <secret>`: printable ASCII without spaces keeps
// that unambiguous. 16 characters is the least we accept for a listener others can reach.
constexpr std::size_t kShortestSecret = 16;
constexpr std::size_t kLongestSecret = 1024;
constexpr std::string_view kSecretRule =
    "a secret must be 16 to 1024 characters of printable ASCII, without spaces";

void read_listen(const At& at, Context& cx, SourceSpec& out) {
  const auto endpoint = read_endpoint(at, cx);
  if (!endpoint) return;
  out.tcp.address = endpoint->address;
  out.tcp.port = endpoint->port;
  out.tcp.loopback = endpoint->loopback;
}

std::string_view trim_space(std::string_view text) {
  const auto space = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; };
  while (!text.empty() && space(text.front())) text.remove_prefix(1);
  while (!text.empty() && space(text.back())) text.remove_suffix(1);
  return text;
}

bool valid_secret(std::string_view secret) {
  if (secret.size() < kShortestSecret || secret.size() > kLongestSecret) return false;
  for (const char c : secret) {
    if (c < 0x21 || c > 0x7E) return false;
  }
  return true;
}

// `secret:` written inline. Messages name the key and never quote the value.
void read_inline_secret(const At& at, Context& cx, SourceSpec& out) {
  if (!at.node.IsScalar() || !valid_secret(at.node.Scalar())) {
    cx.key_error(at.mark, at.key, std::string(kSecretRule));
    return;
  }
  out.tcp.secret = at.node.Scalar();
}

// `secret_file:` the secret is the file's content, without surrounding white space.
void read_secret_file(const At& at, Context& cx, SourceSpec& out) {
  const auto path = file_path()(at, cx);
  if (!path) return;
  std::ifstream file(*path, std::ios::binary);
  if (!file) {
    cx.error(at, fmt::format("cannot read the secret file: {}", std::strerror(errno)));
    return;
  }
  // Like a private key: a secret every user of the machine can read is no secret.
  std::error_code ec;
  const auto permissions = std::filesystem::status(*path, ec).permissions();
  using std::filesystem::perms;
  if (!ec && (permissions & (perms::others_read | perms::others_write)) != perms::none) {
    cx.error(at, fmt::format("the secret file can be read or written by every user of this "
                             "machine (mode {:04o}); make it the service's alone, e.g. "
                             "chmod 600 {}",
                             static_cast<unsigned>(permissions & perms::mask), path->string()));
    return;
  }
  std::string content(kLongestSecret + 64, '\0');  // room for a trailing newline and some spaces
  file.read(content.data(), static_cast<std::streamsize>(content.size()));
  content.resize(static_cast<std::size_t>(file.gcount()));
  if (!valid_secret(trim_space(content))) {
    cx.error(at, fmt::format("the file's content is not a usable secret: {}", kSecretRule));
    return;
  }
  out.tcp.secret = std::string(trim_space(content));
}

// `secret_env:` the name of an environment variable of the service holding the secret.
void read_secret_env(const At& at, Context& cx, SourceSpec& out) {
  const auto name = text()(at, cx);
  if (!name) return;
  const char* value = std::getenv(name->c_str());
  if (value == nullptr || *value == '\0') {
    cx.error(at, "this environment variable is not set, or empty");
    return;
  }
  if (!valid_secret(trim_space(value))) {
    cx.error(at, fmt::format("the variable's value is not a usable secret: {}", kSecretRule));
    return;
  }
  out.tcp.secret = std::string(trim_space(value));
}

template <typename T, typename V>
Store<SourceSpec> into_tcp(Read<V> read, T TcpSpec::*member) {
  return [read = std::move(read), member](const At& at, Context& cx, SourceSpec& out) {
    if (auto value = read(at, cx)) out.tcp.*member = static_cast<T>(*value);
  };
}

constexpr std::string_view kSecretKeys[] = {"secret", "secret_file", "secret_env"};

}  // namespace

const std::vector<Key<SourceSpec>>& tcp_source_keys() {
  static const std::vector<Key<SourceSpec>> keys{
      {"listen", defaults("127.0.0.1:7207"), read_listen},
      {"secret", optional(), read_inline_secret},
      {"secret_file", optional(), read_secret_file},
      {"secret_env", optional(), read_secret_env},
      {"max_line_bytes", defaults("4096"),
       into_tcp(whole_number(16, 1 << 20), &TcpSpec::max_line_bytes)},
      {"max_clients", defaults("64"), into_tcp(whole_number(1, 10000), &TcpSpec::max_clients)},
      {"idle_timeout", defaults("5m"),
       into_tcp(duration(Bounds::above(0.0)), &TcpSpec::idle_timeout_s)},
      {"auth_timeout", defaults("10s"),
       into_tcp(duration(Bounds::above(0.0)), &TcpSpec::auth_timeout_s)},
      {"max_reply_bytes", defaults("65536"),
       into_tcp(whole_number(1024, 1 << 24), &TcpSpec::max_reply_bytes)},
  };
  return keys;
}

void check_tcp_source(const At& entry, Context& cx, const SourceSpec& source) {
  int written = 0;
  for (const auto key : kSecretKeys) {
    const auto at = find(entry, key);
    if (!at) continue;
    if (++written > 1) {
      cx.key_error(at->mark, at->key,
                   "give the secret one way only: secret, secret_file or secret_env");
    }
  }
  // A secret key that was written but could not be read has its own error already.
  if (written == 0 && !source.tcp.loopback) {
    const auto listen = find(entry, "listen");
    const At& at = listen ? *listen : entry;
    cx.error(at,
             "a listener on an address other than loopback needs a shared secret: add "
             "secret_file (or secret_env, or secret), or listen on 127.0.0.1");
  }
}

void check_listeners(const At& list, Context& cx, const std::vector<SourceSpec>& sources,
                     const std::vector<std::size_t>& index_of) {
  const auto every = [](const TcpSpec& tcp) {
    const bool v6 = tcp.address.find(':') != std::string::npos;
    const auto endpoint = parse_endpoint(v6 ? "[" + tcp.address + "]:1" : tcp.address + ":1");
    return endpoint && endpoint->every_address;
  };
  for (std::size_t j = 0; j < sources.size(); ++j) {
    if (sources[j].type != SourceSpec::Type::tcp) continue;
    for (std::size_t i = 0; i < j; ++i) {
      if (sources[i].type != SourceSpec::Type::tcp) continue;
      const TcpSpec& a = sources[i].tcp;
      const TcpSpec& b = sources[j].tcp;
      if (a.port != b.port || !(a.address == b.address || every(a) || every(b))) continue;
      const At entry = element(list, index_of[j]);
      const auto listen = find(entry, "listen");
      cx.error(listen ? *listen : entry,
               fmt::format("sources[{}] listens on this port already", index_of[i]));
      break;
    }
  }
}

}  // namespace stagewell::config_detail
