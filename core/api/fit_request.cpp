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

// An integer member in [lo, hi].
int integer_at(const element& value, const std::string& pointer, int lo, int hi) {
  int64_t v = 0;
  if (value.get_int64().get(v) || v < lo || v > hi) {
    fail(pointer, "must be an integer from " + std::to_string(lo) + " to " + std::to_string(hi));
  }
  return static_cast<int>(v);
}

// The sampler's settings, bounded so that one request cannot ask for unbounded work: at most
// 256 walkers x 20,000 steps, and a returned sample of at most 10,000 draws; the base prior.
void parse_posterior(const element& value, FitRequest& request) {
  const Members m(value, "/options/posterior", {"walkers", "steps", "burn_in", "samples", "prior"});
  EnsembleSamplerOptions& s = request.intervals.sampler;
  if (const auto e = m.find("walkers")) s.walkers = integer_at(*e, m.at("walkers"), 4, 256);
  if (const auto e = m.find("steps")) s.steps = integer_at(*e, m.at("steps"), 10, 20000);
  if (const auto e = m.find("burn_in")) {
    s.burn_in = integer_at(*e, m.at("burn_in"), 0, 19999);
  } else if (m.find("steps")) {
    s.burn_in = std::min(s.burn_in, s.steps / 4);  // the default burn-in, or a quarter of fewer steps
  }
  if (const auto e = m.find("prior")) {
    const std::string prior = string_at(*e, m.at("prior"));
    if (prior != "jeffreys" && prior != "flat") fail(m.at("prior"), "must be jeffreys or flat");
    request.intervals.prior = prior == "jeffreys" ? PosteriorPrior::kJeffreys : PosteriorPrior::kFlat;
  }
  if (const auto e = m.find("samples")) request.intervals.samples_returned = static_cast<std::size_t>(integer_at(*e, m.at("samples"), 0, 10000));
  if (s.walkers % 2 != 0) fail(m.at("walkers"), "must be even (the ensemble moves in two halves)");
  if (s.burn_in >= s.steps) fail(m.at("burn_in"), "must be less than steps");
  if (static_cast<long>(s.walkers) * s.steps > 1000000) fail(m.at("steps"), "walkers x steps must not exceed 1,000,000");
}

void parse_options(const element& value, FitRequest& request) {
  const Members o(value, "/options",
                  {"temperature_bounds", "loss", "distance", "max_iterations", "time_budget_seconds", "systematic_error",
                   "intervals", "seed", "posterior"});
  if (const auto e = o.find("intervals")) {
    request.intervals_name = string_at(*e, o.at("intervals"));
    if (request.intervals_name == "covariance") {
      request.intervals.method = IntervalMethod::kCovariance;
    } else if (request.intervals_name == "profile") {
      request.intervals.method = IntervalMethod::kProfile;
    } else if (request.intervals_name == "posterior") {
      request.intervals.method = IntervalMethod::kPosterior;
    } else {
      fail(o.at("intervals"), "is not a known interval method", {"covariance", "profile", "posterior"});
    }
  }
  if (const auto e = o.find("seed")) {
    int64_t seed = 0;
    if (e->get_int64().get(seed) || seed < 0) fail(o.at("seed"), "must be a non-negative integer");
    request.intervals.sampler.seed = static_cast<std::uint64_t>(seed);
  }
  if (const auto e = o.find("posterior")) parse_posterior(*e, request);
  if ((o.find("seed") || o.find("posterior")) && request.intervals.method != IntervalMethod::kPosterior) {
    fail(o.find("seed") ? o.at("seed") : o.at("posterior"), "applies to intervals \"posterior\" only");
  }
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
  // Documents built from tables and FITS files hold their text fields (band, unit) as read; a byte
  // that is not UTF-8 is replaced (U+FFFD), so that the value is refused with its pointer (422)
  // rather than the dump throwing (a 500). Found by tests/fuzz/fuzz_fits.
  const std::string text = document.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
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
