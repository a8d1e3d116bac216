// The fit request document (POST /v1/fit, `planckton fit`): JSON -> science structs.
//
//   { "spectrum": { "x": [...], "x_unit": "nm", "y": [...], "y_unit": "W/m2/nm",
//                   "y_error": [...], "exclude": [[lo, hi], ...] },
//     "model":    { "kind": "planck" },
//     "options":  { "temperature_bounds": [lo, hi],                      K
//                   "loss": { "kind": "none" | "huber" | "cauchy", "scale": 1.0 },
//                   "distance": { "value": 120, "unit": "pc", "error": 5 },
//                   "max_iterations": 200, "time_budget_seconds": 10 } }
//
// Validation is strict: wrong types, missing members, unknown members, units, models or options
// throw ProblemError with the JSON pointer of the offending value and what would be accepted.
#pragma once

#include <optional>
#include <string>

#include <nlohmann/json_fwd.hpp>

#include "science/derived_quantities.h"
#include "science/planck_fit.h"
#include "science/spectrum.h"

namespace planckton::api {

struct DistanceInput {
  double value = 0.0;
  std::string unit;
  double error = 0.0;
};

struct FitRequest {
  SpectrumInput spectrum;
  std::string model_kind = "planck";
  PlanckFitOptions fit_options;
  std::string loss_name = "none";
  std::optional<DistanceInput> distance;
};

FitRequest parse_fit_request(const nlohmann::json& document);

// Maps a science InputError's field (and index) to the JSON pointer of the request member.
std::string pointer_for_field(const std::string& field, const std::optional<std::size_t>& index);

}  // namespace planckton::api
