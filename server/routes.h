// The routes of planckton-server: HTTP in, api documents out. No physics here: every answer comes
// from core/api (fit_service, catalogue, problem).
#pragma once

#include <httplib.h>

#include "api_keys.h"
#include "metrics.h"
#include "server_config.h"

namespace planckton::server {

// Installs the routes, the checks that run before them (path, method, CORS, API key) and the
// access log on the server.
void install_routes(httplib::Server& server, const ServerConfig& config, Metrics& metrics, const ApiKeys& keys);

}  // namespace planckton::server
