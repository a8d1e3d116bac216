#include "api/fit_request.h"

#include <algorithm>
#include <vector>

#include "api/json_reader.h"
#include "api/photometry_request.h"
#include "api/problem.h"

namespace planckton::api {

namespace {

using namespace json_reading;

void parse_loss(const element& value, FitRequest& request) {
  const Members loss(value, "/options/loss", {"kind", "scale"});
  const std::string kind = string_at(loss.require("kind"), loss.at("kind"));
  if (kind == "none") {
    request.fit_options.loss = RobustLoss::kNone;
  } else if (kind == "huber") {
    request.fit_options.loss = RobustLoss::kHuber;
  } else if (kind == "cauchy") {
    request.fit_options.loss = RobustLoss::kCauchy;
  } else {
    fail(loss.at("kind"), "is not a known loss", {"none", "huber", "cauchy"});
  }
  request.loss_name = kind;
  if (const auto scale = loss.find("scale")) request.fit_options.loss_scale = number_at(*scale, loss.at("scale"));
}

DistanceInput parse_distance(const element& value) {
  const Members d(value, "/options/distance", {"value", "unit", "error"});
  DistanceInput distance;
  distance.value = number_at(d.require("value"), d.at("value"));
  distance.unit = string_at(d.require("unit"), d.at("unit"));
  if (const auto e = d.find("error")) distance.error = number_at(*e, d.at("error"));
  if (!(distance.value > 0.0)) fail(d.at("value"), "must be positive");
  if (!(distance.error >= 0.0)) fail(d.at("error"), "must not be negative");
  return distance;
}

void parse_options(const element& value, FitRequest& request) {
  const Members o(value, "/options",
                  {"temperature_bounds", "loss", "distance", "max_iterations", "time_budget_seconds", "systematic_error"});
  if (const auto e = o.find("systematic_error")) request.systematic_error = number_at(*e, o.at("systematic_error"));
  if (const auto e = o.find("temperature_bounds")) {
    const auto [lo, hi] = pair_at(*e, o.at("temperature_bounds"));
    request.fit_options.min_temperature_k = lo;
    request.fit_options.max_temperature_k = hi;
  }
  if (const auto e = o.find("loss")) parse_loss(*e, request);
  if (const auto e = o.find("distance")) request.distance = parse_distance(*e);
  if (const auto e = o.find("max_iterations")) {
    int64_t iterations = 0;
    if (e->get_int64().get(iterations) || iterations < 1 || iterations > 100000) {
      fail(o.at("max_iterations"), "must be an integer from 1 to 100000");
    }
    request.fit_options.max_iterations = static_cast<int>(iterations);
  }
  if (const auto e = o.find("time_budget_seconds")) {
    const double budget = number_at(*e, o.at("time_budget_seconds"));
    if (!(budget > 0.0) || budget > 3600.0) fail(o.at("time_budget_seconds"), "must be in (0, 3600]");
    request.fit_options.time_budget_seconds = budget;
    request.time_budget_given = true;
  }
}


// One parser per thread: simdjson reuses its buffers from one document to the next.
void apply_members(const Members& top, FitRequest& request) {
  if (const auto e = top.find("id")) request.id = request_id(*e);
  if (const auto e = top.find("model")) request.model = parse_model(*e);
  if (const auto e = top.find("options")) parse_options(*e, request);
}

}  // namespace

void json_reading::parse_fit_options(const element& value, FitRequest& request) { parse_options(value, request); }

FitRequest parse_fit_request(std::string_view text) {
  const element root = parse_text(text);
  const Members top(root, "", {"id", "spectrum", "photometry", "model", "options"});
  FitRequest request;
  const auto photometry = top.find("photometry");
  const auto spectrum = top.find("spectrum");
  if (photometry && spectrum) fail("/photometry", "a request fits a spectrum or photometry, not both");
  if (!photometry && !spectrum) fail("/spectrum", "is required (or photometry)");
  if (photometry) {
    request.photometry = parse_photometry(*photometry);
  } else {
    request.spectrum = parse_spectrum(*spectrum);
  }
  apply_members(top, request);
  if (request.systematic_error) {
    if (!request.photometry) fail("/options/systematic_error", "applies to photometry only");
    request.photometry->input.systematic_fraction = *request.systematic_error;
  }
  return request;
}

FitRequest parse_fit_request(const nlohmann::json& document) {
  const std::string text = document.dump();
  return parse_fit_request(std::string_view(text));
}

void apply_request_members(std::string_view object_text, FitRequest& request) {
  const element root = parse_text(object_text);
  const Members top(root, "", {"id", "spectrum", "model", "options"});
  if (const auto s = top.find("spectrum")) {
    const Members spectrum(*s, "/spectrum", {"exclude"});
    if (const auto e = spectrum.find("exclude")) request.spectrum.exclude = ranges_at(*e, spectrum.at("exclude"));
  }
  apply_members(top, request);
  // As in parse_fit_request: a spectrum has no use for it, so it is refused rather than ignored.
  if (request.systematic_error && !request.photometry) {
    fail("/options/systematic_error", "applies to photometry only (a table whose first column is band)");
  }
}

std::string pointer_for_field(const std::string& field, const std::optional<std::size_t>& index) {
  std::string pointer;
  if (field == "photometry" || field.rfind("photometry.", 0) == 0) {
    // "photometry.<member>[.<member>]" of measurement <index>: /photometry/<index>/<member>/...
    pointer = "/photometry";
    if (index) pointer = index_pointer(pointer, *index);
    if (field.size() > 11) {
      std::string rest = "/" + field.substr(11);
      std::replace(rest.begin(), rest.end(), '.', '/');
      pointer += rest;
    }
    return pointer;
  }
  if (field.rfind("options.", 0) == 0 || field == "model" || field.rfind("model.", 0) == 0) {
    pointer = "/" + field;
    std::replace(pointer.begin(), pointer.end(), '.', '/');
  } else if (field == "distance.unit") {
    pointer = "/options/distance/unit";
  } else {
    pointer = "/spectrum/" + field;
  }
  if (index) pointer = index_pointer(pointer, *index);
  return pointer;
}

}  // namespace planckton::api
