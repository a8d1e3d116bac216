// What the fuzz targets share: the service's limits, the query line, and the checks every answer gets.
//
// A target feeds its bytes to the same api function the server's route calls (server/routes.cpp) and
// stops where the server would hand the request to the solver: the solver is numerics, not input
// handling, and one fit costs a thousand parses. Anything but a ProblemError (or a science InputError,
// which api turns into one) escaping a target is reported by libFuzzer as a crash: in the service it
// would be a 500, which is a defect (DEVELOPERS.md, "Bad input is a value, not a crash").
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <utility>

#include <httplib.h>
#include <nlohmann/json.hpp>

#include "api/fit_service.h"
#include "api/problem.h"

namespace planckton::fuzz {

// planckton-server's defaults (server/server_config.h): the body limit is enforced by httplib before
// a route runs, so a target refuses larger inputs the same way, without reading them.
inline constexpr std::size_t kMaxBodyBytes = 16u << 20;
inline constexpr std::size_t kMaxBatchLines = 10000;
inline const api::ServiceLimits kServerLimits{1000000, 10.0};

// Limits that stop a request after everything has been read and checked, but before it is fitted:
// apply_limits is the first step of api::fit_outcome, and a request of two or more points is over a
// limit of one. The entry points that parse and fit in one call (tables, FITS, batch lines, lab
// documents) are called with these, on inputs of at least two points.
inline const api::ServiceLimits kStopBeforeFit{1, 0.05};

inline std::string_view as_text(const std::uint8_t* data, std::size_t size) {
  return {reinterpret_cast<const char*>(data), size};
}

// As the server writes a document (routes.cpp json_text): invalid UTF-8 in a detail that quotes the
// input is replaced, never thrown.
inline std::string json_text(const nlohmann::ordered_json& document) {
  return document.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

// Every refusal must be a 4xx problem that says what is wrong (a 5xx is a defect). The document is not
// serialised here: json_text cannot fail, and writing it would cost a fifth of every execution.
inline void check_problem(const api::Problem& problem) {
  if (problem.status < 400 || problem.status > 499 || problem.detail.empty()) __builtin_trap();
}

// Table and FITS inputs may begin with a query line: "?name=value&..." up to the first newline, decoded
// by cpp-httplib as the server's request.params are, in the same (name-sorted) order; the rest is the body.
struct QueryAndBody {
  api::TableParameters parameters;
  std::optional<std::string> format;  // the one parameter the representation takes
  std::string_view body;
  bool too_long = false;  // a query httplib refuses (414) before any route runs
};

inline QueryAndBody split_query(std::string_view input) {
  QueryAndBody out;
  out.body = input;
  if (input.empty() || input.front() != '?') return out;
  const std::size_t end = input.find('\n');
  const std::string query(input.substr(1, end == std::string_view::npos ? std::string_view::npos : end - 1));
  out.body = end == std::string_view::npos ? std::string_view() : input.substr(end + 1);
  out.too_long = query.size() > 8000;  // CPPHTTPLIB_REQUEST_URI_MAX_LENGTH (8192) less the path
  httplib::Params params;
  httplib::detail::parse_query_text(query, params);
  for (const auto& [name, value] : params) {
    if (name == "format") out.format = value;
    else out.parameters.emplace_back(name, value);
  }
  return out;
}

}  // namespace planckton::fuzz

#include "science/input_error.h"
#include "science/model_fit.h"
#include "science/photometry.h"
#include "science/spectrum.h"
#include "science/units.h"

namespace planckton::fuzz {

// What api::fit_outcome does with a parsed request before it fits (fit_service.cpp): the service's
// limits, the distance's unit, the data prepared in SI (units converted, inline passbands integrated)
// and the model's view of them. A science InputError becomes the problem the service would answer.
inline void prepare_like_fit_outcome(api::FitRequest request, const api::ServiceLimits& limits) {
  try {
    api::apply_limits(limits, request);
    if (request.distance) (void)parse_length_unit(request.distance->unit);
    if (request.photometry) {
      const MeasuredPhotometry photometry = prepare_photometry(request.photometry->input);
      if (!request.plain()) (void)model_data(photometry);
    } else {
      const MeasuredSpectrum spectrum = prepare_spectrum(request.spectrum);
      if (!request.plain()) (void)model_data(spectrum);
    }
    (void)model_parameters(request.model.spec);
  } catch (const api::ProblemError& e) {
    check_problem(e.problem());
  } catch (const InputError& e) {
    check_problem(api::problem_for(e).problem());
  }
}

}  // namespace planckton::fuzz
