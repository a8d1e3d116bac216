// The fit, from request to response document: what POST /v1/fit, POST /v1/fit/batch and
// `planckton fit` do.
//
// Every front end calls these and only these, so the CLI and the service answer the same document
// for the same input. Bad input throws ProblemError; nothing else is expected to escape.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "api/fit_request.h"
#include "api/problem.h"
#include "api/table_reader.h"
#include "science/input_error.h"
#include "science/photometry_fit.h"

namespace planckton::api {

// What a service allows one request (0 = no limit).
struct ServiceLimits {
  std::size_t max_points = 0;
  double max_time_budget_seconds = 0.0;  // a request may ask for less, never more
};

// The problem document of a science InputError: the pointer of its field and what is accepted.
ProblemError problem_for(const InputError& error);

// The service's limits applied to a parsed request: too many points is a 413 problem; the time
// budget is capped.
void apply_limits(const ServiceLimits& limits, FitRequest& request);

// Everything a fit produced, for the representations other than the JSON document (SVG plots, CSV
// of the model on the data's grid). One of spectrum / photometry is set. A plain Planck fit fills
// `fit` and `derived`; a fit of the model family fills `model_fit` and `model_quantities`; both fill
// `photometry_fit->bands` for photometry.
struct FitOutcome {
  FitRequest request;  // owns the inline passbands the photometry points to
  std::optional<MeasuredSpectrum> spectrum;
  std::optional<MeasuredPhotometry> photometry;
  PlanckFitResult fit;                 // plain Planck fits (for photometry: photometry_fit->fit)
  std::optional<PhotometryFitResult> photometry_fit;
  std::optional<ModelFitResult> model_fit;
  std::optional<ModelQuantities> model_quantities;
  FluxDensityUnit unit;                // of the data; Jy or MJy/sr for photometry
  DerivedQuantities derived;
  nlohmann::ordered_json response;     // the JSON document
};

// The fitted curve as observed (extinction included) in a convention at a frequency, with the
// linearised sigma of its logarithm; value NaN where the model is not defined (outside an extinction
// law's range).
ModelPoint outcome_curve(const FitOutcome& outcome, Convention convention, double frequency_hz);

// A parsed request -> everything the fit produced.
FitOutcome fit_outcome(FitRequest request, const ServiceLimits& limits = {});

// A parsed request -> the response document.
nlohmann::ordered_json fit(FitRequest request, const ServiceLimits& limits = {});

// Request text (JSON) -> response; malformed JSON is a 400 problem.
nlohmann::ordered_json fit_json_text(std::string_view text, const ServiceLimits& limits = {});

// A request document already in memory (tests, tools).
nlohmann::ordered_json fit_document(const nlohmann::json& document, const ServiceLimits& limits = {});

// A table with its units -> response; problems with a row carry the table's line number.
// extra_request_members are applied as in a JSON request (model, options, id, spectrum.exclude).
nlohmann::ordered_json fit_table_text(std::string_view text, const TableRequestOptions& options,
                                      const nlohmann::json& extra_request_members, const ServiceLimits& limits = {});

// A table with its settings as named text parameters, as query parameters (HTTP) or flags (CLI)
// give them: x_unit, y_unit, x_column, y_column, error_column, model (kind), opacity, redshift,
// extinction (law), r_v, fix (NAME:VALUE, repeatable: a fixed parameter), loss, loss_scale, exclude
// (LO:HI, repeatable), distance ("VALUE UNIT"), temperature_min, temperature_max,
// time_budget_seconds, systematic_error, intervals (covariance, profile or posterior), seed. Problems with a parameter name it. A table whose first
// column is `band` is photometry (table_reader.h), fitted through the bands; the spectrum's
// parameters do not apply to it.
using TableParameters = std::vector<std::pair<std::string, std::string>>;
nlohmann::ordered_json fit_table_text(std::string_view text, const TableParameters& parameters,
                                      const ServiceLimits& limits = {});
const std::vector<std::string>& table_parameter_names();
FitOutcome fit_table_outcome(std::string_view text, const TableParameters& parameters, const ServiceLimits& limits = {});

// A FITS file (fits_reader.h) with its settings as named parameters: those of FitsOptions (hdu,
// x_column, y_column, error_column, error_hdu, x_unit, y_unit) and the table parameters that are not
// about columns and units (model, opacity, redshift, extinction, r_v, fix, loss, loss_scale, exclude,
// distance, temperature_min, temperature_max, time_budget_seconds, systematic_error). The response's input gains "fits": the
// reader's notes on what was read and converted.
nlohmann::ordered_json fit_fits(std::string_view bytes, const TableParameters& parameters, const ServiceLimits& limits = {});
FitOutcome fit_fits_outcome(std::string_view bytes, const TableParameters& parameters, const ServiceLimits& limits = {});
const std::vector<std::string>& fits_parameter_names();

// One line of a batch (NDJSON): {"index", "id" (if given), "status", "response" | "problem"}.
// Never throws for bad input: a bad line is answered with its problem.
nlohmann::ordered_json fit_batch_line(std::string_view line, std::size_t index, const ServiceLimits& limits = {});

}  // namespace planckton::api
