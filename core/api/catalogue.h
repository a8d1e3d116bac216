// The service's self-description documents: the model catalogue (GET /v1/models), the units
// (GET /v1/units), the health document (GET /v1/health) and the shipped passbands (GET
// /v1/passbands, GET /v1/passbands/{id}).
#pragma once

#include <string_view>

#include <nlohmann/json.hpp>

#include "science/extinction.h"

#include "science/passband.h"

namespace planckton::api {

nlohmann::ordered_json models_document();
nlohmann::ordered_json units_document();
nlohmann::ordered_json health_document();

// How a band's fluxes are quoted, wavelengths in nm:
//   {"kind": "band_average", "source": ...} or
//   {"kind": "monochromatic", "reference_wavelength_nm": ..., "reference": {"kind": "power_law",
//    "power_law_index": alpha} | {"kind": "black_body", "temperature": T}, "source": ...}
nlohmann::ordered_json quoted_flux_json(const QuotedFlux& quoted);

// [lo, hi] of an extinction law's published range in um, as the papers write them (0.1, not
// 0.09999999999999999).
nlohmann::ordered_json extinction_range_um(const ExtinctionLawInfo& law);

// Every shipped band in the order of INDEX.csv, with pivot wavelength, effective width, range,
// how its fluxes are quoted and its Vega zero point (wavelengths in nm).
nlohmann::ordered_json passbands_document();
// One shipped band: its entry of passbands_document() plus its published notes and its curve
// (wavelengths in um, as the curve files give them). An unknown id throws ProblemError (404
// not-found) naming the id and listing the known ones.
nlohmann::ordered_json passband_document(std::string_view id);

}  // namespace planckton::api
