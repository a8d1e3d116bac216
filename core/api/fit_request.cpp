#include "api/fit_request.h"

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "api/problem.h"

namespace planckton::api {

namespace {

using nlohmann::json;

const char* type_name(const json& value) {
  switch (value.type()) {
    case json::value_t::null: return "null";
    case json::value_t::boolean: return "a boolean";
    case json::value_t::string: return "a string";
    case json::value_t::array: return "an array";
    case json::value_t::object: return "an object";
    case json::value_t::discarded: return "invalid";
    default: return "a number";
  }
}

[[noreturn]] void fail(const std::string& pointer, const std::string& detail,
                       std::vector<std::string> accepted = {}) {
  throw ProblemError(invalid_value(pointer, detail, std::move(accepted)));
}

void require_object(const json& value, const std::string& pointer, const std::vector<std::string>& members) {
  if (!value.is_object()) fail(pointer, std::string("must be an object, is ") + type_name(value));
  for (const auto& [key, _] : value.items()) {
    if (std::find(members.begin(), members.end(), key) == members.end()) {
      fail(pointer + "/" + key, "is not a known member here", members);
    }
  }
}

const json& require_member(const json& object, const std::string& pointer, const char* key) {
  const auto it = object.find(key);
  if (it == object.end()) fail(pointer + "/" + key, "is required");
  return *it;
}

double number_at(const json& value, const std::string& pointer) {
  if (!value.is_number()) fail(pointer, std::string("must be a number, is ") + type_name(value));
  const double v = value.get<double>();
  if (!std::isfinite(v)) fail(pointer, "must be a finite number (it overflows a double)");
  return v;
}

std::string string_at(const json& value, const std::string& pointer) {
  if (!value.is_string()) fail(pointer, std::string("must be a string, is ") + type_name(value));
  return value.get<std::string>();
}

std::vector<double> numbers_at(const json& value, const std::string& pointer) {
  if (!value.is_array()) fail(pointer, std::string("must be an array of numbers, is ") + type_name(value));
  std::vector<double> out;
  out.reserve(value.size());
  for (std::size_t i = 0; i < value.size(); ++i) out.push_back(number_at(value[i], pointer + "/" + std::to_string(i)));
  return out;
}

std::array<double, 2> pair_at(const json& value, const std::string& pointer) {
  if (!value.is_array() || value.size() != 2) fail(pointer, "must be an array of two numbers [lo, hi]");
  return {number_at(value[0], pointer + "/0"), number_at(value[1], pointer + "/1")};
}

SpectrumInput parse_spectrum(const json& s) {
  const std::string p = "/spectrum";
  require_object(s, p, {"x", "x_unit", "y", "y_unit", "y_error", "exclude"});
  SpectrumInput spectrum;
  spectrum.x = numbers_at(require_member(s, p, "x"), p + "/x");
  spectrum.x_unit = string_at(require_member(s, p, "x_unit"), p + "/x_unit");
  spectrum.y = numbers_at(require_member(s, p, "y"), p + "/y");
  spectrum.y_unit = string_at(require_member(s, p, "y_unit"), p + "/y_unit");
  if (const auto it = s.find("y_error"); it != s.end() && !it->is_null()) {
    spectrum.y_error = numbers_at(*it, p + "/y_error");
    if (spectrum.y_error.empty()) fail(p + "/y_error", "must not be empty; omit it when there are no errors");
  }
  if (const auto it = s.find("exclude"); it != s.end()) {
    if (!it->is_array()) fail(p + "/exclude", "must be an array of [lo, hi] ranges in x_unit");
    for (std::size_t i = 0; i < it->size(); ++i) {
      spectrum.exclude.push_back(pair_at((*it)[i], p + "/exclude/" + std::to_string(i)));
    }
  }
  if (spectrum.x.empty()) fail(p + "/x", "must not be empty");
  return spectrum;
}

void parse_loss(const json& value, FitRequest& request) {
  const std::string p = "/options/loss";
  require_object(value, p, {"kind", "scale"});
  const std::string kind = string_at(require_member(value, p, "kind"), p + "/kind");
  if (kind == "none") {
    request.fit_options.loss = RobustLoss::kNone;
  } else if (kind == "huber") {
    request.fit_options.loss = RobustLoss::kHuber;
  } else if (kind == "cauchy") {
    request.fit_options.loss = RobustLoss::kCauchy;
  } else {
    fail(p + "/kind", "is not a known loss", {"none", "huber", "cauchy"});
  }
  request.loss_name = kind;
  if (const auto it = value.find("scale"); it != value.end()) {
    request.fit_options.loss_scale = number_at(*it, p + "/scale");
  }
}

DistanceInput parse_distance(const json& value) {
  const std::string p = "/options/distance";
  require_object(value, p, {"value", "unit", "error"});
  DistanceInput distance;
  distance.value = number_at(require_member(value, p, "value"), p + "/value");
  distance.unit = string_at(require_member(value, p, "unit"), p + "/unit");
  if (const auto it = value.find("error"); it != value.end()) distance.error = number_at(*it, p + "/error");
  if (!(distance.value > 0.0)) fail(p + "/value", "must be positive");
  if (!(distance.error >= 0.0)) fail(p + "/error", "must not be negative");
  return distance;
}

void parse_options(const json& o, FitRequest& request) {
  const std::string p = "/options";
  require_object(o, p, {"temperature_bounds", "loss", "distance", "max_iterations", "time_budget_seconds"});
  if (const auto it = o.find("temperature_bounds"); it != o.end()) {
    const auto [lo, hi] = pair_at(*it, p + "/temperature_bounds");
    request.fit_options.min_temperature_k = lo;
    request.fit_options.max_temperature_k = hi;
  }
  if (const auto it = o.find("loss"); it != o.end()) parse_loss(*it, request);
  if (const auto it = o.find("distance"); it != o.end()) request.distance = parse_distance(*it);
  if (const auto it = o.find("max_iterations"); it != o.end()) {
    if (!it->is_number_integer() || it->get<long long>() < 1 || it->get<long long>() > 100000) {
      fail(p + "/max_iterations", "must be an integer from 1 to 100000");
    }
    request.fit_options.max_iterations = it->get<int>();
  }
  if (const auto it = o.find("time_budget_seconds"); it != o.end()) {
    const double budget = number_at(*it, p + "/time_budget_seconds");
    if (!(budget > 0.0) || budget > 3600.0) fail(p + "/time_budget_seconds", "must be in (0, 3600]");
    request.fit_options.time_budget_seconds = budget;
  }
}

void parse_model(const json& m, FitRequest& request) {
  const std::string p = "/model";
  require_object(m, p, {"kind"});
  request.model_kind = string_at(require_member(m, p, "kind"), p + "/kind");
  if (request.model_kind != "planck") fail(p + "/kind", "is not a known model", {"planck"});
}

}  // namespace

FitRequest parse_fit_request(const json& document) {
  require_object(document, "", {"spectrum", "photometry", "model", "options"});
  FitRequest request;
  if (document.contains("photometry")) {
    throw ProblemError(unsupported_feature("/photometry", "photometry fits are not available in this version; "
                                                          "send a spectrum", {"spectrum"}));
  }
  request.spectrum = parse_spectrum(require_member(document, "", "spectrum"));
  if (const auto it = document.find("model"); it != document.end()) parse_model(*it, request);
  if (const auto it = document.find("options"); it != document.end()) parse_options(*it, request);
  return request;
}

std::string pointer_for_field(const std::string& field, const std::optional<std::size_t>& index) {
  std::string pointer;
  if (field.rfind("options.", 0) == 0) {
    pointer = "/" + field;
    std::replace(pointer.begin(), pointer.end(), '.', '/');
  } else if (field == "distance.unit") {
    pointer = "/options/distance/unit";
  } else {
    pointer = "/spectrum/" + field;
  }
  if (index) {
    pointer += '/';
    pointer += std::to_string(*index);
  }
  return pointer;
}

}  // namespace planckton::api
