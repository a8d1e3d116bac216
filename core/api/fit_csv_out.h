// The fit as a CSV table (text/csv): the data with the fitted model and the residual at each point,
// what POST /v1/fit answers for Accept: text/csv (or ?format=csv) and `planckton fit --output csv`
// prints.
//
// A spectrum: '#' comment lines (the temperature and its 68 % interval, the scale, the units, what
// the model and residual columns are, and the line ends), then the header
//   x,y,y_error,model,residual,excluded
// and one row per point of the request, in its order and in the caller's units: y_error empty when
// none was given; model = the fitted curve scale * B(T) in the data's convention at x
// (science/planck_fit.h fitted_curve, in y's unit); residual = (y - model) / y_error, or y - model
// (in y's unit) without errors; excluded = 1 for points inside the request's exclude ranges (not
// fitted; their model and residual are still given), else 0.
// Band photometry: the same comment lines, then
//   band,pivot_wavelength_nm,unit,value,error,upper_limit,model,residual
// one row per band, from the response's "bands" (value, error and model in the band's own unit or
// magnitude; residual in sigma, the censored residual for upper limits).
//
// Numbers are the shortest decimal that reads back as the same double (std::to_chars). Fields are
// quoted as RFC 4180 section 2 says when they hold a comma, a quote or a line break. Lines end with
// LF ("\n"), not RFC 4180's CRLF; the header comment says so.
//
// Example:
//   std::string table = planckton::api::fit_csv(planckton::api::fit_outcome(request));
#pragma once

#include <string>

#include "api/fit_service.h"

namespace planckton::api {

std::string fit_csv(const FitOutcome& outcome);

}  // namespace planckton::api
