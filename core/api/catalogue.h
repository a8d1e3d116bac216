// The service's self-description documents: the model catalogue (GET /v1/models), the units
// (GET /v1/units) and the health document (GET /v1/health).
#pragma once

#include <nlohmann/json.hpp>

namespace planckton::api {

nlohmann::ordered_json models_document();
nlohmann::ordered_json units_document();
nlohmann::ordered_json health_document();

}  // namespace planckton::api
