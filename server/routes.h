// The routes of planckton-server: HTTP in, api documents out. No physics here: every answer comes
// from core/api (fit_service, catalogue, problem).
#pragma once

#include <httplib.h>

#include <atomic>

#include "api_keys.h"
#include "metrics.h"
#include "server_config.h"

namespace planckton::server {

// What main() and the routes share: the drain at shutdown.
struct ServiceState {
  std::atomic<bool> draining{false};  // new requests are answered 503 with Retry-After
  std::atomic<int> in_flight{0};      // requests being answered (a streaming batch included)
};

// Installs the routes, the checks that run before them (path, method, CORS, API key) and the
// access log on the server.
void install_routes(httplib::Server& server, const ServerConfig& config, Metrics& metrics, const ApiKeys& keys,
                    ServiceState& state);

}  // namespace planckton::server
