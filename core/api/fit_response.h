// The fit response document: science results -> JSON (DESIGN.md's fixed points, and more).
//
// Members keep the order in which they are written (model first, provenance last).
// Units at this edge: temperature K; peak frequencies Hz and peak wavelengths nm; bolometric flux
// W m^-2; angular radius mas; radius m and nominal solar radii, luminosity W and nominal solar
// luminosities (IAU 2015 Resolution B3: R_sun = 6.957e8 m, L_sun = 3.828e26 W).
#pragma once

#include <vector>

#include <nlohmann/json.hpp>

#include "api/fit_request.h"
#include "science/photometry_fit.h"

namespace planckton::api {

// Pieces of the response that other documents (the laboratory endpoints) share.
nlohmann::ordered_json estimate_json(const Estimate& estimate, const char* unit, double factor = 1.0);
nlohmann::ordered_json statistics_json(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                       const PlanckFitResult& fit);
nlohmann::ordered_json warnings_json(const std::vector<FitWarning>& warnings);
nlohmann::ordered_json provenance_json();

nlohmann::ordered_json make_fit_response(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                 const PlanckFitResult& fit, const DerivedQuantities& derived);

// The same document for band measurements, with a "bands" member (measured, model, residual, pivot
// wavelength and quoted convention per band) after "derived". `unit` is the unit of the scale's
// meaning: Jy (solid angle) or MJy/sr (emissivity).
nlohmann::ordered_json make_photometry_response(const FitRequest& request, const MeasuredPhotometry& data,
                                                const PhotometryFitResult& result, const FluxDensityUnit& unit,
                                                const DerivedQuantities& derived);

// The document of a fit of the model family (science/model_fit.h): every parameter with its unit,
// interval, bounds, prior and whether it was fixed; the correlation matrix of the free ones;
// peaks of the intrinsic curve; "components" (two temperatures), "frames" (a redshift) and
// "extinction" (the law applied) when they apply; dust mass among the derived quantities.
// "intervals" says which method gave the intervals (covariance, profile, posterior) with its
// figures (profile evaluations; the sampler's acceptance, autocorrelation times, convergence, seed,
// prior and, when asked for, a thinned sample).
nlohmann::ordered_json make_model_response(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                           const ModelFitResult& fit, const ModelIntervals& intervals);
nlohmann::ordered_json make_model_photometry_response(const FitRequest& request, const MeasuredPhotometry& data,
                                                      const std::vector<BandFit>& bands, const FluxDensityUnit& unit,
                                                      const ModelFitResult& fit, const ModelIntervals& intervals);

}  // namespace planckton::api
