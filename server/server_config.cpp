#include "server_config.h"

#include <CLI/CLI.hpp>

#include <cstdlib>
#include <fstream>
#include <iostream>
#include <sstream>
#include <thread>

namespace planckton::server {

namespace {

std::vector<std::string> split_list(const std::string& text) {
  std::vector<std::string> items;
  std::stringstream stream(text);
  std::string item;
  while (std::getline(stream, item, ',')) {
    const auto first = item.find_first_not_of(" \t");
    if (first == std::string::npos) continue;
    items.push_back(item.substr(first, item.find_last_not_of(" \t") - first + 1));
  }
  return items;
}

// One key per line; blank lines and '#' comments are skipped.
std::vector<std::string> read_key_file(const std::string& path) {
  std::ifstream in(path);
  if (!in) {
    std::cerr << "planckton-server: cannot read the API key file " << path << '\n';
    std::exit(2);
  }
  std::vector<std::string> keys;
  std::string line;
  while (std::getline(in, line)) {
    const auto first = line.find_first_not_of(" \t\r");
    if (first == std::string::npos || line[first] == '#') continue;
    keys.push_back(line.substr(first, line.find_last_not_of(" \t\r") - first + 1));
  }
  return keys;
}

}  // namespace

ServerConfig load_config(int argc, char** argv) {
  ServerConfig config;
  std::string key_file;
  std::string cors;
  CLI::App app{"planckton-server: the HTTP service that fits black-body curves to spectra"};
  app.add_option("--bind", config.bind, "address to listen on")->envname("PLANCKTON_BIND")->capture_default_str();
  app.add_option("--port", config.port, "port (0: an ephemeral port)")->envname("PLANCKTON_PORT")
      ->check(CLI::Range(0, 65535))->capture_default_str();
  app.add_option("--threads", config.threads, "worker threads (0: the number of cores)")
      ->envname("PLANCKTON_THREADS")->check(CLI::Range(0, 1024));
  app.add_option("--max-body-bytes", config.max_body_bytes, "largest request body")
      ->envname("PLANCKTON_MAX_BODY_BYTES")->check(CLI::Range(std::size_t{1}, std::size_t{1} << 34))->capture_default_str();
  app.add_option("--max-points", config.max_points, "most points in one spectrum")
      ->envname("PLANCKTON_MAX_POINTS")->check(CLI::Range(std::size_t{2}, std::size_t{100000000}))->capture_default_str();
  app.add_option("--max-batch-lines", config.max_batch_lines, "most requests in one batch")
      ->envname("PLANCKTON_MAX_BATCH_LINES")->check(CLI::Range(std::size_t{1}, std::size_t{10000000}))->capture_default_str();
  app.add_option("--time-budget", config.time_budget_seconds, "most seconds one fit may take")
      ->envname("PLANCKTON_TIME_BUDGET_SECONDS")->check(CLI::Range(0.001, 3600.0))->capture_default_str();
  app.add_option("--keep-alive-max", config.keep_alive_max, "requests per kept-alive connection")
      ->envname("PLANCKTON_KEEP_ALIVE_MAX")->check(CLI::Range(std::size_t{1}, std::size_t{100000}))->capture_default_str();
  app.add_option("--keep-alive-timeout", config.keep_alive_timeout_seconds, "seconds an idle connection is kept")
      ->envname("PLANCKTON_KEEP_ALIVE_TIMEOUT")->check(CLI::Range(1, 3600))->capture_default_str();
  app.add_option("--read-timeout", config.read_timeout_seconds, "seconds to wait for a request's bytes")
      ->envname("PLANCKTON_READ_TIMEOUT")->check(CLI::Range(1, 3600))->capture_default_str();
  app.add_option("--max-waiting-connections", config.max_waiting_connections,
                 "connections that may wait for a worker; more are answered 503")
      ->envname("PLANCKTON_MAX_WAITING_CONNECTIONS")->check(CLI::Range(std::size_t{1}, std::size_t{100000}))
      ->capture_default_str();
  app.add_option("--drain-timeout", config.drain_timeout_seconds, "at shutdown, seconds to let requests finish")
      ->envname("PLANCKTON_DRAIN_TIMEOUT")->check(CLI::Range(0.0, 3600.0))->capture_default_str();
  app.add_option("--api-keys-file", key_file, "file of API keys, one per line (none: open service)")
      ->envname("PLANCKTON_API_KEYS_FILE");
  app.add_option("--cors-origin", cors, "comma-separated origins allowed by CORS (none: CORS off)")
      ->envname("PLANCKTON_CORS_ORIGINS");
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    std::exit(app.exit(e) == 0 ? 0 : 2);
  }
  if (config.threads == 0) config.threads = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  // Keys only from a file or the environment, never from a flag (flags show in process lists).
  if (const char* keys = std::getenv("PLANCKTON_API_KEYS")) config.api_keys = split_list(keys);
  if (!key_file.empty()) {
    for (std::string& key : read_key_file(key_file)) config.api_keys.push_back(std::move(key));
  }
  config.cors_origins = split_list(cors);
  return config;
}

}  // namespace planckton::server
