// The picture of a fit: an SVG document (image/svg+xml) of the data, the fitted Planck curve with
// its one-sigma band, and the residuals; what POST /v1/fit answers for Accept: image/svg+xml (or
// ?format=svg) and what `planckton fit --plot` writes.
//
// Written by our own small writer (svg_writer.h), 800 x 600 user units, self-contained (no fonts,
// scripts, style sheets or images from elsewhere: generic font families only), accessible (<title>
// and <desc>, role="img"), and deterministic: the same outcome gives the same bytes.
//
// A spectrum, in the caller's own units (request.spectrum: x in x_unit, y in y_unit):
//  - the points with their error bars; points inside the request's exclude ranges hollow and grey,
//    the ranges shaded;
//  - the model scale * B(T) in the data's convention (science/planck_fit.h fitted_curve, divided by
//    the unit's SI factor) on 400 points over the data range, and its linearised one-sigma band,
//    model * exp(-+ log_sigma), as a shaded polygon;
//  - the peak of the data's convention (the response's peaks[peaks.of_data]) as a dashed vertical
//    line with its value in the axis unit (an arrow at the edge when it lies outside the data);
//  - a residual panel below: (y - model) / y_error, or (y - model) / model without errors; points
//    beyond the panel drawn as triangles at its edge;
//  - each axis logarithmic when its data span more than 1.5 decades (x and y independently; y only
//    when every value is positive), with tick labels and the unit in the axis label;
//  - a title with the temperature, its error and 68 % interval from the response, a line with the
//    points and the goodness of fit, and a legend placed in the emptiest corner.
// Band photometry, log-log, wavelength in um and the quoted F_nu in Jy (MJy/sr for intensities):
//  - each band at its pivot wavelength, with a horizontal bar for its effective width (passband.h)
//    and a vertical one-sigma error bar (a magnitude error becomes the flux interval between
//    m - sigma and m + sigma); upper limits as downward arrows from the limit;
//  - the model scale * B_nu(T) with its band, and the model's value in each band as an open square;
//  - residuals (measured - model) / sigma, the limits' censored residuals as open triangles.
//
// Classes in the document, for tools and tests: panel main / panel residuals, axis x / axis y /
// axis residual (data-scale="linear" or "log", text.axis-label), point (point excluded),
// error-bars, band-width, upper-limit, model, model-band, model-value, excluded-range, peak,
// residual, legend.
//
// Example:
//   planckton::api::FitOutcome outcome = planckton::api::fit_outcome(planckton::api::parse_fit_request(text));
//   std::string svg = planckton::api::fit_svg(outcome);
#pragma once

#include <string>

#include "api/fit_service.h"

namespace planckton::api {

std::string fit_svg(const FitOutcome& outcome);

}  // namespace planckton::api
