// planckton-server: the HTTP front end. It only carries requests (routes.cpp) to the api layer.
//
// Binds to loopback by default. SIGTERM and SIGINT stop taking requests (503 with Retry-After), let
// the requests in flight finish (a streaming batch included, up to --drain-timeout), and exit 0.
#include <httplib.h>
#include <malloc.h>
#include <pthread.h>
#include <sys/socket.h>

#include <chrono>
#include <csignal>
#include <iostream>
#include <nlohmann/json.hpp>
#include <thread>

#include "api_keys.h"
#include "connection_queue.h"
#include "metrics.h"
#include "routes.h"
#include "server_config.h"

namespace {

void log_line(const nlohmann::ordered_json& line) {
  std::cerr << line.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace) << std::endl;
}

constexpr int kListenBacklog = 1024;  // the kernel caps it at net.core.somaxconn (4096 on Linux 5.4+)

bool is_loopback(const std::string& address) {
  return address == "localhost" || address == "::1" || address.rfind("127.", 0) == 0;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace planckton::server;
  const ServerConfig config = load_config(argc, argv);

  // Signals are taken by one thread (sigwait below), not by whichever thread they interrupt.
  sigset_t stop_signals;
  sigemptyset(&stop_signals);
  sigaddset(&stop_signals, SIGTERM);
  sigaddset(&stop_signals, SIGINT);
  pthread_sigmask(SIG_BLOCK, &stop_signals, nullptr);
  std::signal(SIGPIPE, SIG_IGN);  // a client that goes away is an error on its socket, not a crash

  // Keep freed memory for the next request instead of returning and re-faulting it (glibc mallopt(3)).
  mallopt(M_TRIM_THRESHOLD, 256 << 20);
  mallopt(M_MMAP_THRESHOLD, 64 << 20);

  httplib::Server server;
  server.new_task_queue = [&config] {
    return new ConnectionQueue(static_cast<std::size_t>(config.threads), config.max_waiting_connections);
  };
  // The listening socket: SO_REUSEADDR (a restart may bind over connections in TIME_WAIT), but not
  // httplib's default SO_REUSEPORT, with which a second process of the same user could bind the same
  // port and silently take a share of the connections. Its descriptor is kept to widen the backlog.
  int listener = -1;
  server.set_socket_options([&listener](int socket) {
    const int yes = 1;
    setsockopt(socket, SOL_SOCKET, SO_REUSEADDR, &yes, sizeof yes);
    listener = socket;
  });
  server.set_tcp_nodelay(true);  // without it, Nagle holds each response's body behind its headers (~40 ms)
  server.set_payload_max_length(config.max_body_bytes);
  server.set_keep_alive_max_count(config.keep_alive_max);
  server.set_keep_alive_timeout(config.keep_alive_timeout_seconds);
  server.set_read_timeout(config.read_timeout_seconds, 0);
  server.set_write_timeout(config.read_timeout_seconds, 0);

  Metrics metrics;
  const ApiKeys keys(config.api_keys);
  ServiceState state;
  install_routes(server, config, metrics, keys, state);

  int port = config.port;
  if (port == 0) {
    port = server.bind_to_any_port(config.bind);
  } else if (!server.bind_to_port(config.bind, port)) {
    port = -1;
  }
  if (port < 0) {
    log_line({{"event", "error"}, {"detail", "cannot listen on " + config.bind + ":" + std::to_string(config.port)}});
    return 1;
  }
  // httplib listens with a backlog of 5: under a burst of connections (clients turned away with 503
  // reconnecting at once) the kernel dropped SYNs and clients waited for their 1 s retransmission
  // before even reaching the overflow answerer. listen(2) again on the bound socket only resizes it.
  if (listener >= 0 && ::listen(listener, kListenBacklog) != 0) {
    log_line({{"event", "warning"}, {"detail", "could not widen the listen backlog"}});
  }
  if (!is_loopback(config.bind) && !keys.enabled()) {
    log_line({{"event", "warning"},
              {"detail", "listening beyond loopback without API keys: anyone who can reach this address can use "
                         "the service; configure PLANCKTON_API_KEYS or --api-keys-file"}});
  }
  log_line({{"event", "listening"}, {"address", config.bind}, {"port", port}, {"threads", config.threads},
            {"auth", keys.enabled() ? "api_keys" : "off"}});

  // Graceful stop: new requests are answered 503 while those in flight (a streaming batch included)
  // finish; then the listener stops. httplib's own stop() would cut a streaming response short.
  std::thread stopper([&server, &stop_signals, &state, &config] {
    int signal = 0;
    sigwait(&stop_signals, &signal);
    log_line({{"event", "stopping"}, {"signal", signal == SIGTERM ? "SIGTERM" : "SIGINT"}, {"in_flight", state.in_flight.load()}});
    state.draining = true;
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(config.drain_timeout_seconds);
    while (state.in_flight > 0 && std::chrono::steady_clock::now() < deadline) {
      std::this_thread::sleep_for(std::chrono::milliseconds(10));
    }
    if (state.in_flight > 0) log_line({{"event", "drain_timeout"}, {"in_flight", state.in_flight.load()}});
    server.stop();
  });
  const bool listened = server.listen_after_bind();
  if (!listened && server.is_running()) {
    log_line({{"event", "error"}, {"detail", "the listening socket failed"}});
  }
  stopper.join();
  log_line({{"event", "stopped"}});
  return 0;
}
