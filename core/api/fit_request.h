// The fit request document (POST /v1/fit, `planckton fit`): JSON text -> science structs.
//
//   { "id":       "optional string or integer, echoed in the response",
//     "spectrum": { "x": [...], "x_unit": "nm", "y": [...], "y_unit": "W/m2/nm",
//                   "y_error": [...], "exclude": [[lo, hi], ...] },
//   or "photometry": [ { "band": "2mass-j", "value": 9.68, "error": 0.02, "unit": "Vegamag" }, ... ]
//                 (photometry_request.h has the whole member),
//     "model":    { "kind": "planck", ... }   (model_request.h: the model family and its parameters)
//     "options":  { "temperature_bounds": [lo, hi],                      K
//                   "loss": { "kind": "none" | "huber" | "cauchy", "scale": 1.0 },
//                   "distance": { "value": 120, "unit": "pc", "error": 5 },
//                   "systematic_error": 0.02,                          photometry: fraction of flux
//                   "intervals": "covariance" | "profile" | "posterior",
//                   "seed": 1,                                          posterior: same seed, same answer
//                   "posterior": { "walkers": 32, "steps": 2000, "burn_in": 300, "samples": 0 },
//                   "max_iterations": 200, "time_budget_seconds": 10 } }
//
// The text is parsed with simdjson (its DOM API: the arrays of a 1,000-point spectrum are read in
// tens of microseconds, where a general-purpose document model takes most of a millisecond), with
// a nesting limit and UTF-8 validation. Validation is strict: malformed JSON is a 400 problem;
// wrong types, missing, duplicate or unknown members, units, models or options are 422 problems
// with the JSON pointer of the offending value and what would be accepted.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

#include "api/model_request.h"
#include "science/derived_quantities.h"
#include "science/model_intervals.h"
#include "science/photometry.h"
#include "science/planck_fit.h"
#include "science/spectrum.h"

namespace planckton::api {

struct DistanceInput {
  double value = 0.0;
  std::string unit;
  double error = 0.0;
};

struct PhotometryRequest {
  PhotometryInput input;  // band pointers into builtin_passbands() or inline_bands
  std::vector<std::shared_ptr<const Passband>> inline_bands;
};

struct FitRequest {
  std::optional<nlohmann::ordered_json> id;  // string or integer, echoed
  SpectrumInput spectrum;                    // unless photometry is given
  std::optional<PhotometryRequest> photometry;
  ModelRequest model;  // kind "planck" unless given
  PlanckFitOptions fit_options;
  bool time_budget_given = false;
  std::string loss_name = "none";
  std::optional<DistanceInput> distance;
  std::optional<double> systematic_error;  // options.systematic_error (photometry only)
  IntervalOptions intervals;                // options.intervals, options.seed, options.posterior
  std::string intervals_name = "covariance";

  // The dedicated Planck fit applies: a plain planck model with covariance intervals.
  bool plain() const { return model.plain() && intervals.method == IntervalMethod::kCovariance; }
};

// The whole request document.
FitRequest parse_fit_request(std::string_view text);
FitRequest parse_fit_request(const nlohmann::json& document);

// Members given beside a table (model, options, id, and spectrum.exclude), as a JSON object text,
// applied to a request whose spectrum came from the table.
void apply_request_members(std::string_view object_text, FitRequest& request);

// Maps a science InputError's field (and index) to the JSON pointer of the request member.
std::string pointer_for_field(const std::string& field, const std::optional<std::size_t>& index);

}  // namespace planckton::api
