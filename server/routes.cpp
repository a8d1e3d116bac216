#include "routes.h"

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cstdint>
#include <cstdio>
#include <ctime>
#include <iostream>
#include <memory>
#include <mutex>
#include <optional>
#include <string_view>

#include <unistd.h>

#include "api/catalogue.h"
#include "api/fit_representation.h"
#include "api/fit_service.h"
#include "api/lab_documents.h"
#include "api/problem.h"
#include "connection_queue.h"

namespace planckton {
// openapi/openapi.yaml, embedded at build time (cmake/embed_text.cmake).
extern const std::string_view kOpenApiYaml;
}  // namespace planckton

namespace planckton::server {

namespace {

using Clock = std::chrono::steady_clock;
using api::Problem;
using api::ProblemError;

class Routes;
using RouteHandler = void (Routes::*)(const httplib::Request&, httplib::Response&);

// A route is an exact path, or (prefix non-empty) a templated path: the prefix followed by one
// non-empty path segment, e.g. "/v1/passbands/{id}" for "/v1/passbands/2mass-j". The access log
// and the metrics label a request by its route's path, so a templated route counts as one.
struct Route {
  std::string_view path;
  std::vector<std::string> methods;
  RouteHandler handler;
  std::string_view prefix = {};

  bool matches(std::string_view request_path) const {
    if (prefix.empty()) return path == request_path;
    if (!request_path.starts_with(prefix)) return false;
    const std::string_view segment = request_path.substr(prefix.size());
    return !segment.empty() && segment.find('/') == std::string_view::npos;
  }
  // The path segment after the prefix (templated routes).
  std::string_view parameter(std::string_view request_path) const { return request_path.substr(prefix.size()); }
};

const Route* find_route(const std::string& path);

std::string joined(const std::vector<std::string>& items, const char* separator) {
  std::string out;
  for (const auto& item : items) out += (out.empty() ? "" : separator) + item;
  return out;
}

// The media type of a Content-Type header, lower case, without parameters.
std::string media_type(const httplib::Request& request) {
  std::string type = request.get_header_value("Content-Type");
  type = type.substr(0, type.find(';'));
  type.erase(std::remove_if(type.begin(), type.end(), [](unsigned char c) { return std::isspace(c); }), type.end());
  std::transform(type.begin(), type.end(), type.begin(), [](unsigned char c) { return std::tolower(c); });
  return type;
}

// httplib decodes gzip, deflate and br request bodies itself, after the Content-Length check: a few
// hundred KB of gzip would become gigabytes past --max-body-bytes (measured: 476 KB became 500 MB,
// 1 GB of peak memory). So a body with a content coding other than identity is refused (415, RFC 9110
// section 15.5.16) before a byte of it is read.
std::optional<Problem> content_coding_problem(const httplib::Request& request) {
  const std::size_t count = request.get_header_value_count("Content-Encoding");
  for (std::size_t i = 0; i < count; ++i) {
    std::string coding = request.get_header_value("Content-Encoding", i);
    coding.erase(std::remove_if(coding.begin(), coding.end(), [](unsigned char c) { return std::isspace(c); }), coding.end());
    std::transform(coding.begin(), coding.end(), coding.begin(), [](unsigned char c) { return std::tolower(c); });
    if (coding.empty() || coding == "identity") continue;
    return api::unsupported_media_type("request bodies are taken without a content coding (Content-Encoding: " + coding +
                                           " is not accepted); send the body as it is",
                                       {"identity"});
  }
  return std::nullopt;
}

// JSON text of a document. A request path may carry any bytes (httplib percent-decodes it, e.g. %FF),
// and it is quoted in problem details and log lines: invalid UTF-8 becomes U+FFFD instead of an
// exception (which in the logger would end the process).
std::string json_text(const nlohmann::ordered_json& document) {
  return document.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

void send_problem(httplib::Response& response, const Problem& problem) {
  response.status = problem.status;
  if (problem.status == 401) response.set_header("WWW-Authenticate", "Bearer");
  if (problem.status == 405) response.set_header("Allow", joined(problem.accepted, ", "));
  response.set_content(json_text(problem.to_json()), "application/problem+json");
}

void send_json(httplib::Response& response, const nlohmann::ordered_json& document) {
  response.status = 200;
  response.set_content(json_text(document), "application/json");
}

// Per worker thread: when the request being answered started (set before routing, read by the
// access log).
thread_local std::optional<Clock::time_point> request_started;
thread_local bool request_counted = false;    // counted in ServiceState::in_flight
thread_local std::size_t streamed_bytes = 0;  // written by a chunked content provider

std::string utc_timestamp() {
  const auto now = std::chrono::system_clock::now();
  const std::time_t seconds = std::chrono::system_clock::to_time_t(now);
  const auto millis = std::chrono::duration_cast<std::chrono::milliseconds>(now.time_since_epoch()).count() % 1000;
  std::tm utc{};
  gmtime_r(&seconds, &utc);
  char text[96];
  std::snprintf(text, sizeof text, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", utc.tm_year + 1900, utc.tm_mon + 1,
                utc.tm_mday, utc.tm_hour, utc.tm_min, utc.tm_sec, static_cast<int>(millis));
  return text;
}

class Routes {
 public:
  Routes(const ServerConfig& config, Metrics& metrics, const ApiKeys& keys, ServiceState& state)
      : config_(config), metrics_(metrics), keys_(keys), state_(state),
        limits_{config.max_points, config.time_budget_seconds} {}

  // Runs a handler; a ProblemError becomes its problem document, anything else a 500 (a defect).
  void answer(const httplib::Request& request, httplib::Response& response, RouteHandler handler) {
    try {
      (this->*handler)(request, response);
    } catch (const ProblemError& e) {
      if (is_fit_route(request.path)) count_failed_input(e.problem());
      send_problem(response, e.problem());
    } catch (const std::exception& e) {
      log_event("internal_error", e.what());
      send_problem(response, api::internal_error());
    }
  }

  // POST /v1/fit. The representation of the answer (JSON, SVG or CSV) is chosen first, from the
  // `format` parameter or the Accept header; then the body's media type chooses its reader. Problems
  // are answered as application/problem+json whatever was asked.
  void fit(const httplib::Request& request, httplib::Response& response) {
    response.set_header("Vary", "Accept");
    const api::FitRepresentation representation =
        api::choose_fit_representation(format_parameter(request), request.get_header_value("Accept"));
    const std::string type = media_type(request);
    if (type == "application/json") {
      reject_query_parameters_but_format(request);
      send_fit(response, api::fit_json_outcome(request.body, limits_), representation);
    } else if (is_table_media_type(type)) {
      send_fit(response, api::fit_table_outcome(request.body, table_parameters(request), limits_), representation);
    } else if (type == "application/fits") {  // RFC 4047
      send_fit(response, api::fit_fits_outcome(request.body, table_parameters(request), limits_), representation);
    } else {
      throw ProblemError(api::unsupported_media_type(
          "POST /v1/fit takes a JSON request (Content-Type: application/json), a table (text/csv, "
          "text/tab-separated-values or text/plain with x_unit and y_unit query parameters) or a FITS "
          "file (application/fits); got '" + (type.empty() ? std::string("no Content-Type") : type) + "'",
          {"application/json", "text/csv", "text/tab-separated-values", "text/plain", "application/fits"}));
    }
  }

  void light(const httplib::Request& request, httplib::Response& response) {
    require_json(request, "/v1/light");
    send_json(response, api::light_source_text(request.body, limits_));
  }

  void hot_body(const httplib::Request& request, httplib::Response& response) {
    require_json(request, "/v1/hot-body");
    const nlohmann::ordered_json document = api::hot_body_text(request.body, limits_);
    count_fit(document);
    send_json(response, document);
  }

  void models(const httplib::Request&, httplib::Response& response) { send_json(response, api::models_document()); }
  void units(const httplib::Request&, httplib::Response& response) { send_json(response, api::units_document()); }
  void health(const httplib::Request&, httplib::Response& response) { send_json(response, api::health_document()); }
  void passbands(const httplib::Request&, httplib::Response& response) { send_json(response, api::passbands_document()); }
  void passband(const httplib::Request& request, httplib::Response& response) {
    send_json(response, api::passband_document(find_route(request.path)->parameter(request.path)));
  }
  void metrics_text(const httplib::Request&, httplib::Response& response) {
    response.set_content(metrics_.exposition(), "text/plain; version=0.0.4; charset=utf-8");
  }
  void openapi(const httplib::Request&, httplib::Response& response) {
    response.set_content(std::string(kOpenApiYaml), "application/yaml");
  }

  void batch(const httplib::Request& request, httplib::Response& response) {
    const std::string type = media_type(request);
    if (type != "application/x-ndjson" && type != "application/jsonl") {
      throw ProblemError(api::unsupported_media_type(
          "POST /v1/fit/batch takes one JSON request per line (Content-Type: application/x-ndjson); got '" +
              (type.empty() ? std::string("no Content-Type") : type) + "'",
          {"application/x-ndjson", "application/jsonl"}));
    }
    // Each line carries its own settings; a query parameter (e.g. format=csv) would be ignored silently.
    if (!request.params.empty()) {
      throw ProblemError(api::invalid_parameter(request.params.begin()->first,
                                                "POST /v1/fit/batch takes no query parameters; each line carries its "
                                                "own model and options, and the answer is NDJSON"));
    }
    auto state = std::make_shared<BatchState>();
    state->body = request.body;
    const std::size_t line_count = split_lines(*state, config_.max_batch_lines);
    if (line_count > config_.max_batch_lines) {
      throw ProblemError(api::payload_too_large("the batch has " + std::to_string(line_count) +
                                                " requests; this service takes at most " +
                                                std::to_string(config_.max_batch_lines) + " per batch"));
    }
    // Streamed: each line is written as soon as its fit is done, in input order.
    response.set_chunked_content_provider("application/x-ndjson", [this, state](std::size_t, httplib::DataSink& sink) {
      if (state->next == state->lines.size()) {
        sink.done();
        return true;
      }
      const auto [index, offset, length] = state->lines[state->next++];
      const nlohmann::ordered_json line =
          api::fit_batch_line(std::string_view(state->body).substr(offset, length), index, limits_);
      count_batch_line(line);
      const std::string text = json_text(line) + "\n";
      streamed_bytes += text.size();
      return sink.write(text.data(), text.size());
    });
  }

  // Before the body is read: the drain at shutdown, CORS preflight, and chunked bodies. Everything
  // else is decided after the body is read (dispatch), so that an early answer never leaves an
  // unread body on a kept-alive connection.
  httplib::Server::HandlerResponse before_routing(const httplib::Request& request, httplib::Response& response) {
    request_started = Clock::now();
    if (state_.draining) {
      response.set_header("Retry-After", "1");
      return answer_early(response, api::service_unavailable("the service is shutting down"));
    }
    // Beyond the queue: the 503 is sent by dispatch(), after httplib has read the body, so that the
    // connection stays in step. Answered before its body, the body was read as the next requests on
    // the kept-alive connection (measured: one 414 per 503 under load, and a request written inside
    // a body was answered). A body that cannot be read within the limits gets its 503 at once.
    if (on_overflow_thread()) {
      response.set_header("Retry-After", "1");
      response.set_header("Connection", "close");  // the client is to come back later, on a new connection
      if (framing_problem(request) || content_coding_problem(request)) return answer_early(response, overloaded());
      return httplib::Server::HandlerResponse::Unhandled;
    }
    ++state_.in_flight;
    request_counted = true;
    const Route* route = find_route(request.path);
    if (request.method == "OPTIONS" && route != nullptr && cors_origin(request)) {
      response.status = 204;
      response.set_header("Access-Control-Allow-Methods", joined(route->methods, ", "));
      response.set_header("Access-Control-Allow-Headers", "Authorization, Content-Type");
      response.set_header("Access-Control-Max-Age", "600");
      return httplib::Server::HandlerResponse::Handled;
    }
    if (const auto problem = framing_problem(request)) return answer_early(response, *problem);
    if (const auto problem = content_coding_problem(request)) {
      response.set_header("Accept-Encoding", "identity");  // RFC 9110 section 12.5.3
      return answer_early(response, *problem);
    }
    return httplib::Server::HandlerResponse::Unhandled;
  }

  // The request's framing, before its body is read (RFC 9112 section 6). The body-size limit is
  // enforced on Content-Length; a transfer coding (chunked, in any spelling) has no length to check
  // before the body is read, so it is refused (RFC 9110, 411 Length Required). A Content-Length that
  // is not one decimal number is a 400 (RFC 9112 section 6.3), one over the limit a 413 now: reading
  // (or waiting for) a body that is refused anyway would hold a worker until the read timeout. A
  // request of a method whose body httplib would read up to the end of the connection must state its
  // length. Header fields totalling more than kMaxHeaderBytes are a 431 (RFC 6585).
  std::optional<Problem> framing_problem(const httplib::Request& request) const {
    constexpr std::size_t kMaxHeaderBytes = 64 * 1024;
    std::size_t header_bytes = 0;
    for (const auto& [name, value] : request.headers) header_bytes += name.size() + value.size() + 4;
    if (header_bytes > kMaxHeaderBytes) {
      Problem problem = api::malformed_document("the header fields total " + std::to_string(header_bytes) +
                                                " bytes; this service reads at most " + std::to_string(kMaxHeaderBytes));
      problem.status = 431;
      return problem;
    }
    if (request.has_header("Transfer-Encoding")) return api::length_required();
    const std::size_t lengths = request.get_header_value_count("Content-Length");
    if (lengths == 0) {
      const bool body_expected = request.method == "POST" || request.method == "PUT" || request.method == "PATCH" ||
                                 request.method == "DELETE" || request.method == "PRI";
      if (!body_expected) return std::nullopt;
      const Route* route = find_route(request.path);
      if (route == nullptr) return api::not_found("no endpoint at " + request.path + "; see GET /openapi.yaml");
      if (!takes_method(*route, request.method)) {
        return api::method_not_allowed(request.path + " takes " + joined(route->methods, ", "), route->methods);
      }
      return api::length_required();
    }
    const std::string text = request.get_header_value("Content-Length");
    std::uint64_t length = 0;
    const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), length);
    if (lengths > 1 || text.empty() || text.size() > 19 || error != std::errc() || end != text.data() + text.size() ||
        text.find_first_not_of("0123456789") != std::string::npos) {
      return api::malformed_document(lengths > 1 ? "the request has more than one Content-Length header"
                                                 : "the Content-Length header is not a decimal number of bytes");
    }
    if (length > config_.max_body_bytes) {
      return api::payload_too_large("the body is " + std::to_string(length) + " bytes (Content-Length); this service's limit is " +
                                    std::to_string(config_.max_body_bytes) + " bytes");
    }
    return std::nullopt;
  }

  // HEAD is answered wherever GET is (RFC 9110 section 9.1: every general-purpose server supports
  // both); httplib sends the GET answer's headers without its body.
  static bool takes_method(const Route& route, const std::string& method) {
    const std::string& asked = method == "HEAD" ? kGet : method;
    return std::find(route.methods.begin(), route.methods.end(), asked) != route.methods.end();
  }
  static inline const std::string kGet = "GET";

  // Every request that reaches routing: path, method and key, then the route's handler.
  void dispatch(const httplib::Request& request, httplib::Response& response) {
    if (on_overflow_thread()) {  // see before_routing(); Retry-After and Connection: close are set there
      send_problem(response, overloaded());
      return;
    }
    const Route* route = find_route(request.path);
    if (route == nullptr) {
      send_problem(response, api::not_found("no endpoint at " + request.path + "; see GET /openapi.yaml"));
    } else if (!takes_method(*route, request.method)) {
      send_problem(response, api::method_not_allowed(request.path + " takes " + joined(route->methods, ", "), route->methods));
    } else if (keys_.enabled() && request.path != "/v1/health" && !keys_.accepts(request.get_header_value("Authorization"))) {
      send_problem(response, api::unauthorized());
    } else {
      answer(request, response, route->handler);
    }
  }

  void after_routing(const httplib::Request& request, httplib::Response& response) {
    if (const auto origin = cors_origin(request)) {
      response.set_header("Access-Control-Allow-Origin", *origin);
      response.set_header("Vary", "Origin");
    }
    // A worker serves one connection at a time, for as long as it is kept alive (up to
    // --keep-alive-max requests, and --keep-alive-timeout between them). While other connections
    // wait for a worker, the client is asked to close this one, so that the waiting ones are served
    // in turn: without it, 64 connections on 2 workers waited up to 100 requests of each connection
    // ahead (bench/load_mixed.py: p99 4.8 s).
    if (!on_overflow_thread() && connections_waiting()) response.set_header("Connection", "close");
  }

  // Statuses httplib sets itself (a body over the limit, a malformed request line ...) get a
  // problem document too.
  void on_error(const httplib::Request&, httplib::Response& response) {
    if (!response.body.empty()) return;
    Problem problem;
    if (response.status == 413) {
      problem = api::payload_too_large("the body is larger than this service's limit of " +
                                       std::to_string(config_.max_body_bytes) + " bytes");
    } else if (response.status == 404) {
      problem = api::not_found("no endpoint at this path; see GET /openapi.yaml");
    } else {
      problem = api::malformed_document("the HTTP request could not be read");
      problem.status = response.status;
    }
    send_problem(response, problem);
  }

  void access_log(const httplib::Request& request, const httplib::Response& response) {
    double seconds = 0.0;
    if (request_started) seconds = std::chrono::duration<double>(Clock::now() - *request_started).count();
    request_started.reset();
    if (request_counted) --state_.in_flight;
    request_counted = false;
    const std::size_t response_bytes = response.body.size() + streamed_bytes;
    streamed_bytes = 0;
    const Route* matched = find_route(request.path);
    const std::string route = matched != nullptr ? std::string(matched->path) : "unmatched";
    metrics_.record_request(route, response.status, seconds);
    // No bodies, no headers (so never a key), only what an operator needs.
    const nlohmann::ordered_json line = {
        {"event", "request"},       {"time", utc_timestamp()},         {"method", request.method},
        {"path", request.path},     {"status", response.status},       {"duration_ms", seconds * 1e3},
        {"request_bytes", request.body.size()}, {"response_bytes", response_bytes},
        {"remote", request.remote_addr}};
    write_log_line(json_text(line));
  }

  void log_event(const char* event, const std::string& detail) {
    write_log_line(json_text({{"event", event}, {"time", utc_timestamp()}, {"detail", detail}}));
  }

  const api::ServiceLimits& limits() const { return limits_; }
  Metrics& metrics() { return metrics_; }

 private:
  struct BatchLine {
    std::size_t index, offset, length;
  };
  struct BatchState {
    std::string body;
    std::vector<BatchLine> lines;
    std::size_t next = 0;
  };

  // Non-blank lines with their 0-based line numbers.
  // Returns how many there are; at most max_lines are indexed, so that a body of millions of tiny
  // lines is refused without first building an index of them all (24 bytes a line: a 15 MB body of
  // 5 million lines took 290 MB of peak memory to refuse).
  static std::size_t split_lines(BatchState& state, std::size_t max_lines) {
    std::size_t start = 0, index = 0, count = 0;
    const std::string_view body = state.body;
    while (start <= body.size()) {
      std::size_t end = body.find('\n', start);
      if (end == std::string_view::npos) end = body.size();
      std::string_view line = body.substr(start, end - start);
      if (line.find_first_not_of(" \t\r") != std::string_view::npos && ++count <= max_lines) {
        state.lines.push_back({index, start, line.size()});
      }
      start = end + 1;
      ++index;
    }
    return count;
  }

  std::optional<std::string> cors_origin(const httplib::Request& request) const {
    if (config_.cors_origins.empty() || !request.has_header("Origin")) return std::nullopt;
    const std::string origin = request.get_header_value("Origin");
    const auto& allowed = config_.cors_origins;
    if (std::find(allowed.begin(), allowed.end(), origin) == allowed.end()) return std::nullopt;
    return origin;
  }

  // ---- POST /v1/fit: request bodies and representations

  static bool is_table_media_type(const std::string& type) {
    return type == "text/csv" || type == "text/tab-separated-values" || type == "text/plain";
  }

  // ?format=json|svg|csv, given at most once.
  static std::optional<std::string> format_parameter(const httplib::Request& request) {
    if (request.get_param_value_count("format") > 1) {
      throw ProblemError(api::invalid_parameter("format", "is given more than once", {"json", "svg", "csv"}));
    }
    if (!request.has_param("format")) return std::nullopt;
    return request.get_param_value("format");
  }

  // A JSON body carries its settings itself: the only query parameter it takes is format.
  static void reject_query_parameters_but_format(const httplib::Request& request) {
    for (const auto& [name, value] : request.params) {
      if (name == "format") continue;
      throw ProblemError(api::invalid_parameter(name,
                                                "query parameters apply to tables only; put the settings in the "
                                                "JSON request's model and options (format is the one parameter a "
                                                "JSON request takes)"));
    }
  }

  // The table's settings: every query parameter but format, which chooses the representation.
  static api::TableParameters table_parameters(const httplib::Request& request) {
    api::TableParameters parameters;
    for (const auto& [name, value] : request.params) {
      if (name != "format") parameters.emplace_back(name, value);
    }
    return parameters;
  }

  void send_fit(httplib::Response& response, const api::FitOutcome& outcome, api::FitRepresentation representation) {
    count_fit(outcome.response);
    if (representation == api::FitRepresentation::kJson) {
      send_json(response, outcome.response);
      return;
    }
    response.status = 200;
    response.set_content(api::represent(outcome, representation), api::media_type_of(representation));
  }

  static void require_json(const httplib::Request& request, const std::string& path) {
    const std::string type = media_type(request);
    if (type != "application/json") {
      throw ProblemError(api::unsupported_media_type(
          "POST " + path + " takes a JSON request (Content-Type: application/json); got '" +
              (type.empty() ? std::string("no Content-Type") : type) + "'",
          {"application/json"}));
    }
    if (!request.params.empty()) {
      throw ProblemError(api::invalid_parameter(request.params.begin()->first, "this endpoint takes no query parameters"));
    }
  }

  static Problem overloaded() { return api::service_unavailable("every worker is busy and the queue is full; retry shortly"); }

  // An answer before the body is read: the connection is closed after it, so that the unread body
  // is never taken for the next request.
  static httplib::Server::HandlerResponse answer_early(httplib::Response& response, const Problem& problem) {
    send_problem(response, problem);
    response.set_header("Connection", "close");
    return httplib::Server::HandlerResponse::Handled;
  }

  static bool is_fit_route(const std::string& path) {
    return path == "/v1/fit" || path == "/v1/fit/batch" || path == "/v1/hot-body";
  }

  void count_fit(const nlohmann::ordered_json& document) {
    metrics_.record_fit(document.value("model", std::string("planck")));
    if (document.value("status", std::string()) != "converged") metrics_.record_failed_fit("not_converged");
  }

  void count_failed_input(const Problem& problem) {
    if (problem.status == 400 || problem.status == 413 || problem.status == 422) metrics_.record_failed_fit("invalid_input");
  }

  void count_batch_line(const nlohmann::ordered_json& line) {
    if (line.contains("response")) {
      count_fit(line["response"]);
    } else {
      metrics_.record_failed_fit("invalid_input");
    }
  }

  // One write(2) per line: stderr is unbuffered, and a stream would issue several system calls.
  void write_log_line(std::string line) {
    line += '\n';
    const std::lock_guard lock(log_mutex_);
    for (std::size_t written = 0; written < line.size();) {
      const ssize_t n = ::write(STDERR_FILENO, line.data() + written, line.size() - written);
      if (n <= 0) break;  // a closed stderr must not stop the service
      written += static_cast<std::size_t>(n);
    }
  }

  const ServerConfig& config_;
  Metrics& metrics_;
  const ApiKeys& keys_;
  ServiceState& state_;
  api::ServiceLimits limits_;
  std::mutex log_mutex_;
};

const Route* find_route(const std::string& path) {
  static const std::vector<Route> kRoutes = {
      {"/v1/fit", {"POST"}, &Routes::fit},          {"/v1/fit/batch", {"POST"}, &Routes::batch},
      {"/v1/light", {"POST"}, &Routes::light},      {"/v1/hot-body", {"POST"}, &Routes::hot_body},
      {"/v1/models", {"GET"}, &Routes::models},     {"/v1/units", {"GET"}, &Routes::units},
      {"/v1/health", {"GET"}, &Routes::health},     {"/metrics", {"GET"}, &Routes::metrics_text},
      {"/openapi.yaml", {"GET"}, &Routes::openapi}, {"/v1/passbands", {"GET"}, &Routes::passbands},
      {"/v1/passbands/{id}", {"GET"}, &Routes::passband, "/v1/passbands/"},
  };
  for (const Route& route : kRoutes) {
    if (route.matches(path)) return &route;
  }
  return nullptr;
}

}  // namespace

void install_routes(httplib::Server& server, const ServerConfig& config, Metrics& metrics, const ApiKeys& keys,
                    ServiceState& state) {
  // Shared by every handler, so it lives as long as the server's handlers do.
  const auto routes = std::make_shared<Routes>(config, metrics, keys, state);
  const auto dispatch = [routes](const httplib::Request& q, httplib::Response& r) { routes->dispatch(q, r); };
  // One pattern for every path and method: dispatch() decides, after the body has been read.
  server.Get(".*", dispatch);
  server.Post(".*", dispatch);
  server.Put(".*", dispatch);
  server.Patch(".*", dispatch);
  server.Delete(".*", dispatch);
  server.Options(".*", dispatch);
  server.set_pre_routing_handler([routes](const httplib::Request& q, httplib::Response& r) { return routes->before_routing(q, r); });
  server.set_post_routing_handler([routes](const httplib::Request& q, httplib::Response& r) { routes->after_routing(q, r); });
  server.set_error_handler([routes](const httplib::Request& q, httplib::Response& r) { routes->on_error(q, r); });
  server.set_exception_handler([routes](const httplib::Request&, httplib::Response& r, std::exception_ptr) {
    routes->log_event("internal_error", "unhandled exception");
    send_problem(r, api::internal_error());
  });
  server.set_logger([routes](const httplib::Request& q, const httplib::Response& r) { routes->access_log(q, r); });
}

}  // namespace planckton::server
