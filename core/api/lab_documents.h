// The laboratory documents: light sources (POST /v1/light, `planckton light`) and hot bodies
// (POST /v1/hot-body, `planckton hot-body`). JSON text in, response document out; bad input throws
// ProblemError with the pointer of the offending value.
//
//   light:    {"spectrum": {...per-wavelength power, e.g. "relative/nm"...},
//              "observer": "cie1931_2deg" | "cie1964_10deg"}
//   hot body: {"spectrum": {...per-steradian radiance, e.g. "W/m2/sr/nm"...},
//              "emissivity": "constant" | "linear", "radiance_temperature_at": [x, ...],
//              "ratio_pair": [x1, x2], "options": {...as for /v1/fit...}}
#pragma once

#include <string_view>

#include <nlohmann/json.hpp>

#include "api/fit_service.h"

namespace planckton::api {

nlohmann::ordered_json light_source_text(std::string_view text, const ServiceLimits& limits = {});
nlohmann::ordered_json hot_body_text(std::string_view text, const ServiceLimits& limits = {});

// The cautions every laboratory answer carries.
const std::vector<std::string>& laboratory_cautions();

}  // namespace planckton::api
