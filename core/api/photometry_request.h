// The "photometry" member of a fit request: band measurements -> science inputs.
//
//   "photometry": [
//     { "band": "2mass-j",                 a shipped band (GET /v1/passbands), or a curve of one's own:
//               { "id": "lab-filter-7", "wavelength": [...], "wavelength_unit": "nm",
//                 "response": [...], "detector": "photon_counting" | "energy_integrating" },
//       "value": 9.68, "error": 0.02, "unit": "Vegamag",     ABmag, Vegamag or a flux density unit
//       "upper_limit": false,                                 value = the limit, error = 1-sigma noise
//       "zero_point": { "value": 1594, "unit": "Jy" },        Vegamag only; overrides the band's
//       "quoted": { "kind": "band_average" }                  or { "kind": "monochromatic",
//                 "wavelength": 3.55, "wavelength_unit": "um",
//                 "reference": { "kind": "power_law", "power_law_index": -1 }
//                            | { "kind": "black_body", "temperature": 10000 } }
//       "systematic_error": 0.03 },                           fraction of the flux, this band only
//     ... ]
// and "options": { "systematic_error": 0.02 } for every band without its own. Internal to core/api.
#pragma once

#include "api/fit_request.h"
#include "api/json_reader.h"

namespace planckton::api::json_reading {

// At pointer "/photometry". Inline curves are checked here, so their problems carry the sample's pointer.
PhotometryRequest parse_photometry(const element& value);

}  // namespace planckton::api::json_reading
