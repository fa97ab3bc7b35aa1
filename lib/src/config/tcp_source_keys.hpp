// The keys of a `type: tcp` source (config.hpp, TcpSpec): where it listens, the shared secret its
// clients must send, and the limits on each connection.
#pragma once

#include <cstddef>
#include <vector>

#include "config/key_table.hpp"
#include "stagewell/config.hpp"

namespace stagewell::config_detail {

// The rows of the tcp keys, in reading order (appended to a source's table by source_keys.cpp).
const std::vector<Key<SourceSpec>>& tcp_source_keys();

// Checks across the keys of one tcp source: the secret given at most one way, and a secret
// whenever the address is not loopback (an error on `listen`, so the service will not start).
void check_tcp_source(const At& entry, Context& cx, const SourceSpec& source);

// Two tcp sources on one port, on the same address or one of them on every address.
void check_listeners(const At& list, Context& cx, const std::vector<SourceSpec>& sources,
                     const std::vector<std::size_t>& index_of);

}  // namespace stagewell::config_detail
