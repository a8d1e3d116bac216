// planckton-server's configuration: command-line flags, each with an environment variable
// (the flag wins), and the API keys.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace planckton::server {

struct ServerConfig {
  std::string bind = "127.0.0.1";  // loopback unless asked: see README, "Exposing the service"
  int port = 8080;                 // 0 = an ephemeral port
  int threads = 0;                 // 0 = the number of cores
  std::size_t max_body_bytes = 16u << 20;
  std::size_t max_points = 1000000;
  std::size_t max_batch_lines = 10000;
  double time_budget_seconds = 10.0;
  std::size_t keep_alive_max = 100;
  int keep_alive_timeout_seconds = 5;
  int read_timeout_seconds = 30;
  std::size_t max_waiting_connections = 64;  // beyond: 503 with Retry-After
  double drain_timeout_seconds = 60.0;  // at shutdown, how long requests in flight may take
  std::vector<std::string> api_keys;      // empty: the service is open
  std::vector<std::string> cors_origins;  // empty: CORS off
};

// Parses flags and environment; prints help or an error and exits on bad arguments.
ServerConfig load_config(int argc, char** argv);

}  // namespace planckton::server
