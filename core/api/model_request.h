// The "model" member of a fit request: JSON -> the science model (science/model.h) and the control
// of its parameters (science/model_fit.h).
//
//   "model": { "kind": "planck" | "diluted_planck" | "modified_black_body" | "two_temperature",
//              "opacity": "thin" | "general",                         modified_black_body
//              "reference_frequency": {"value": 1, "unit": "THz"},    thin form's nu_0 (any spectral unit)
//              "dust_opacity": {"value": 0.1, "unit": "m2/kg" | "cm2/g",
//                               "at": {"value": 250, "unit": "um"}},  dust mass, with options.distance
//              "angular_radius": {"value": 0.05, "unit": "mas", "error": 0.002},   diluted_planck
//              "radius": {"value": 6.9e9, "unit": "m", "error": 1e8},  diluted_planck, with options.distance
//              "extinction": {"law": "cardelli1989", "r_v": 3.1, "frame": "observed" | "rest"},
//              "redshift": 0.5,
//              "parameters": { "<name>": {"fixed": v} | {"bounds": [lo, hi], "prior": {"mean": m, "sigma": s},
//                                          "initial": v} } }
//
// Parameter values are in the units GET /v1/models lists (K, Hz, mag, the data's scale unit).
// Validation is strict, as for the rest of the request: unknown members, kinds, laws, units and
// parameter names are 422 problems with the pointer of the offending value.
#pragma once

#include <map>
#include <optional>
#include <string>

#include "api/json_reader.h"
#include "science/model.h"
#include "science/model_fit.h"
#include "science/model_quantities.h"

namespace planckton::api {

// A measured size: SI value (rad or m) and relative error.
struct MeasuredSize {
  double value = 0.0;
  double relative_error = 0.0;
};

struct ModelRequest {
  std::string kind_name = "planck";
  ModelSpec spec;
  std::map<std::string, ParameterControl> controls;
  std::optional<MeasuredSize> angular_radius;
  std::optional<MeasuredSize> radius;  // becomes an angular radius with options.distance
  std::optional<DustOpacityInput> dust_opacity;

  // The bare Planck curve with nothing to control: the dedicated fast fit (science/planck_fit.h).
  bool plain() const;
};

namespace json_reading {
ModelRequest parse_model(const element& value);
}

// The angle units the model accepts ("rad", "deg", "arcsec", "mas", "uas"), for problems and the catalogue.
const std::vector<std::string>& documented_angle_units();

}  // namespace planckton::api
