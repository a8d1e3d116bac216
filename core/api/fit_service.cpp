#include "api/fit_service.h"

#include <algorithm>
#include <charconv>
#include <cmath>

#include "api/fit_response.h"
#include "api/fits_reader.h"
#include "api/json_reader.h"
#include "api/problem.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton::api {

namespace {

std::vector<std::string> accepted_for_field(const std::string& field) {
  if (field == "x_unit") return documented_spectral_axis_units();
  if (field == "y_unit") return documented_flux_density_units();
  if (field == "distance.unit") return documented_length_units();
  return {};
}

}  // namespace

ProblemError problem_for(const InputError& e) {
  return ProblemError(invalid_value(pointer_for_field(e.field(), e.index()), e.what(), accepted_for_field(e.field())));
}

void apply_limits(const ServiceLimits& limits, FitRequest& request) {
  if (limits.max_points > 0 && request.photometry && request.photometry->input.measurements.size() > limits.max_points) {
    throw ProblemError(payload_too_large("the photometry has " + std::to_string(request.photometry->input.measurements.size()) +
                                         " bands; this service fits at most " + std::to_string(limits.max_points)));
  }
  if (limits.max_points > 0 && request.spectrum.x.size() > limits.max_points) {
    throw ProblemError(payload_too_large("the spectrum has " + std::to_string(request.spectrum.x.size()) +
                                         " points; this service fits at most " + std::to_string(limits.max_points)));
  }
  if (limits.max_time_budget_seconds > 0.0) {
    double& budget = request.fit_options.time_budget_seconds;
    budget = request.time_budget_given ? std::min(budget, limits.max_time_budget_seconds) : limits.max_time_budget_seconds;
  }
}

namespace {

// "/spectrum/{x,y,y_error}/<row>" -> the table line of that row; other pointers have no line.
std::optional<std::size_t> table_line_of(const std::string& pointer, const Table& table) {
  for (const char* column : {"/spectrum/x/", "/spectrum/y/", "/spectrum/y_error/"}) {
    const std::string prefix = column;
    if (pointer.rfind(prefix, 0) != 0) continue;
    const std::string row = pointer.substr(prefix.size());
    if (row.empty() || row.find_first_not_of("0123456789") != std::string::npos || row.size() > 18) return std::nullopt;
    const std::size_t index = std::stoul(row);
    return index < table.line_of_row.size() ? std::optional(table.line_of_row[index]) : std::nullopt;
  }
  return std::nullopt;
}

// ---- table parameters ----------------------------------------------------------------------

double parameter_number(const std::string& name, const std::string& text) {
  double value = 0.0;
  const char* begin = text.data();
  const char* end = text.data() + text.size();
  if (begin != end && *begin == '+') ++begin;
  const auto [stop, error] = std::from_chars(begin, end, value);
  if (begin == end || error != std::errc() || stop != end || !std::isfinite(value)) {
    throw ProblemError(invalid_parameter(name, "'" + text + "' is not a finite number"));
  }
  return value;
}

nlohmann::json exclude_range(const std::string& text) {
  const auto colon = text.find(':');
  if (colon == std::string::npos) throw ProblemError(invalid_parameter("exclude", "takes LO:HI, got '" + text + "'"));
  return nlohmann::json::array({parameter_number("exclude", text.substr(0, colon)),
                                parameter_number("exclude", text.substr(colon + 1))});
}

nlohmann::json distance_member(const std::string& text) {
  const auto space = text.find_first_of(" \t");
  const std::string value = text.substr(0, space);
  // "5 " (blanks but no unit) takes the default unit like "5"; substr at npos threw out_of_range (a
  // 500; found by tests/fuzz/fuzz_table).
  const auto unit_start = space == std::string::npos ? std::string::npos : text.find_first_not_of(" \t", space);
  const std::string unit = unit_start == std::string::npos ? "pc" : text.substr(unit_start);
  return {{"value", parameter_number("distance", value)}, {"unit", unit}};
}

struct TableSettings {
  TableRequestOptions table;
  nlohmann::json extra = nlohmann::json::object();
};

bool spectrum_only_parameter(const std::string& name) {
  for (const char* spectral : {"x_unit", "y_unit", "x_column", "y_column", "error_column", "loss", "loss_scale", "exclude"}) {
    if (name == spectral) return true;
  }
  return false;
}

// require_units: a table's units come only from its parameters (a FITS file has its own).
TableSettings table_settings(const TableParameters& parameters, bool photometry, bool require_units) {
  TableSettings settings;
  nlohmann::json& options = settings.extra["options"];
  options = nlohmann::json::object();
  std::optional<double> t_min, t_max;
  for (const auto& [name, value] : parameters) {
    if (photometry && spectrum_only_parameter(name)) {
      throw ProblemError(invalid_parameter(name, "applies to spectra; this table is photometry (its first column is band)"));
    }
    if (name == "x_unit") settings.table.x_unit = value;
    else if (name == "y_unit") settings.table.y_unit = value;
    else if (name == "x_column") settings.table.x_column = value;
    else if (name == "y_column") settings.table.y_column = value;
    else if (name == "error_column") settings.table.error_column = value;
    else if (name == "model") settings.extra["model"]["kind"] = value;
    else if (name == "opacity") settings.extra["model"]["opacity"] = value;
    else if (name == "redshift") settings.extra["model"]["redshift"] = parameter_number(name, value);
    else if (name == "extinction") settings.extra["model"]["extinction"]["law"] = value;
    else if (name == "r_v") settings.extra["model"]["extinction"]["r_v"] = parameter_number(name, value);
    else if (name == "fix") {
      const auto colon = value.find(':');
      if (colon == std::string::npos || colon == 0) throw ProblemError(invalid_parameter("fix", "takes NAME:VALUE, got '" + value + "'"));
      nlohmann::json& control = settings.extra["model"]["parameters"][value.substr(0, colon)];
      if (control.contains("fixed")) throw ProblemError(invalid_parameter("fix", "fixes " + value.substr(0, colon) + " twice"));
      control["fixed"] = parameter_number("fix", value.substr(colon + 1));
    }
    else if (name == "loss") options["loss"]["kind"] = value;
    else if (name == "loss_scale") options["loss"]["scale"] = parameter_number(name, value);
    else if (name == "exclude") settings.extra["spectrum"]["exclude"].push_back(exclude_range(value));
    else if (name == "distance") options["distance"] = distance_member(value);
    else if (name == "temperature_min") t_min = parameter_number(name, value);
    else if (name == "temperature_max") t_max = parameter_number(name, value);
    else if (name == "time_budget_seconds") options["time_budget_seconds"] = parameter_number(name, value);
    else if (name == "systematic_error") options["systematic_error"] = parameter_number(name, value);
    else if (name == "intervals") options["intervals"] = value;
    else if (name == "seed") {
      const double seed = parameter_number(name, value);
      if (!(seed >= 0.0) || seed != std::floor(seed) || seed > 9e15) throw ProblemError(invalid_parameter(name, "must be a non-negative integer"));
      options["seed"] = static_cast<std::int64_t>(seed);
    }
    else throw ProblemError(invalid_parameter(name, "is not a known parameter", table_parameter_names()));
  }
  if (require_units && !photometry && settings.table.x_unit.empty()) throw ProblemError(invalid_parameter("x_unit", "is required for a table", documented_spectral_axis_units()));
  if (require_units && !photometry && settings.table.y_unit.empty()) throw ProblemError(invalid_parameter("y_unit", "is required for a table", documented_flux_density_units()));
  if (settings.extra.contains("model") && !settings.extra["model"].contains("kind")) settings.extra["model"]["kind"] = "planck";
  if (settings.extra.contains("model") && settings.extra["model"].contains("extinction") &&
      !settings.extra["model"]["extinction"].contains("law")) {
    throw ProblemError(invalid_parameter("r_v", "needs extinction (a law)"));
  }
  if (options.contains("loss") && !options["loss"].contains("kind")) {
    throw ProblemError(invalid_parameter("loss_scale", "needs loss (huber or cauchy)"));
  }
  if (t_min || t_max) {
    const PlanckFitOptions defaults;
    options["temperature_bounds"] = {t_min.value_or(defaults.min_temperature_k), t_max.value_or(defaults.max_temperature_k)};
  }
  return settings;
}

// The parameter a request-document pointer came from, for problems with a table's settings.
std::optional<std::string> parameter_of(const std::string& pointer) {
  static const std::vector<std::pair<std::string, std::string>> kPrefixes = {
      {"/spectrum/x_unit", "x_unit"}, {"/spectrum/y_unit", "y_unit"}, {"/spectrum/exclude", "exclude"},
      {"/model/opacity", "opacity"}, {"/model/redshift", "redshift"}, {"/model/extinction/r_v", "r_v"},
      {"/model/extinction", "extinction"}, {"/model/parameters", "fix"},
      {"/model", "model"}, {"/options/loss/scale", "loss_scale"}, {"/options/loss", "loss"},
      {"/options/distance", "distance"}, {"/options/temperature_bounds/0", "temperature_min"},
      {"/options/temperature_bounds/1", "temperature_max"}, {"/options/temperature_bounds", "temperature_min"},
      {"/options/time_budget_seconds", "time_budget_seconds"}, {"/options/systematic_error", "systematic_error"},
      {"/options/intervals", "intervals"}, {"/options/seed", "seed"}};
  for (const auto& [prefix, name] : kPrefixes) {
    if (pointer.rfind(prefix, 0) == 0) return name;
  }
  return std::nullopt;
}

}  // namespace

namespace {

// The model's curve with a delta-method band: d ln m / d u by central differences (step 1e-2 sigma).
ModelPoint model_curve_point(const ModelFitResult& fit, const std::vector<ParameterInfo>& infos, Convention convention,
                             double frequency_hz) {
  const std::vector<double> u = fit.internal_values();
  ModelPoint point;
  try {
    point.value = model_value(fit.spec, infos, u, convention, frequency_hz);
  } catch (const InputError&) {
    point.value = std::numeric_limits<double>::quiet_NaN();
    return point;
  }
  if (!fit.covariance_available || !(point.value > 0.0)) return point;
  std::vector<double> g(fit.free.size());
  for (std::size_t i = 0; i < fit.free.size(); ++i) {
    const std::size_t p = fit.free[i];
    const double h = 1e-2 * fit.parameters[p].internal_sigma.value_or(1e-4);
    std::vector<double> up = u, down = u;
    up[p] += h;
    down[p] -= h;
    g[i] = (std::log(model_value(fit.spec, infos, up, convention, frequency_hz)) -
                                       std::log(model_value(fit.spec, infos, down, convention, frequency_hz))) / (2.0 * h);
  }
  point.log_sigma = std::sqrt(std::max(quadratic_form(fit, g), 0.0));
  if (!std::isfinite(point.log_sigma)) point.log_sigma = 0.0;
  return point;
}

// The band values of a model fit, for the response's "bands" and the plots.
std::vector<BandFit> model_band_fits(const MeasuredPhotometry& data, const ModelFitResult& fit) {
  const std::vector<ParameterInfo> infos = model_parameters(fit.spec);
  std::vector<BandFit> bands;
  for (std::size_t b = 0; b < data.bands.size(); ++b) {
    const BandMeasurement& m = data.bands[b];
    const double nu = constants::kSpeedOfLight / m.quadrature.quoted_wavelength_m;
    const double at_quoted = model_curve_point(fit, infos, Convention::kEnergyPerFrequency, nu).value;
    bands.push_back({fit.items[b].model, fit.items[b].residual,
                     std::isfinite(at_quoted) ? m.from_quoted_f_nu(std::max(at_quoted, 1e-300)) : fit.items[b].model});
  }
  return bands;
}

// The angular radius diluted_planck needs: given, or radius / distance.
ModelSpec spec_with_radius(const FitRequest& request, const std::optional<Distance>& distance) {
  ModelSpec spec = request.model.spec;
  if (request.model.radius) {
    if (!distance) throw ProblemError(invalid_value("/model/radius", "needs options.distance (or give model.angular_radius)"));
    const MeasuredSize& r = *request.model.radius;
    spec.angular_radius = AngularRadius{r.value / distance->metres, std::hypot(r.relative_error, distance->relative_error)};
  }
  return spec;
}

void fit_model_family(FitOutcome& out, const FitRequest& request, const std::optional<Distance>& distance) {
  const ModelSpec spec = spec_with_radius(request, distance);
  const ModelFitOptions options{request.fit_options, request.model.controls};
  const ModelData data = out.photometry ? model_data(*out.photometry) : model_data(*out.spectrum);
  out.model_fit = fit_model(data, spec, options);
  ModelIntervals intervals = model_intervals(data, *out.model_fit, options, request.intervals, out.unit, distance,
                                             request.model.dust_opacity);
  out.model_quantities = intervals.quantities;
  const ModelFitResult& fit = *out.model_fit;
  if (out.photometry) {
    out.photometry_fit = PhotometryFitResult{{}, model_band_fits(*out.photometry, fit)};
    out.response = make_model_photometry_response(request, *out.photometry, out.photometry_fit->bands, out.unit, fit,
                                                  intervals);
  } else {
    out.response = make_model_response(request, *out.spectrum, fit, intervals);
  }
}

void fit_plain_planck(FitOutcome& out, const FitRequest& request, const std::optional<Distance>& distance) {
  if (out.photometry) {
    out.photometry_fit = fit_planck_photometry(*out.photometry, request.fit_options);
    out.fit = out.photometry_fit->fit;
    out.derived = derive_quantities(out.fit, out.unit, distance);
    out.response = make_photometry_response(request, *out.photometry, *out.photometry_fit, out.unit, out.derived);
  } else {
    out.fit = fit_planck(*out.spectrum, request.fit_options);
    out.derived = derive_quantities(out.fit, out.unit, distance);
    out.response = make_fit_response(request, *out.spectrum, out.fit, out.derived);
  }
}

}  // namespace

ModelPoint outcome_curve(const FitOutcome& outcome, Convention convention, double frequency_hz) {
  if (!outcome.model_fit) return fitted_curve(outcome.fit, convention, frequency_hz);
  return model_curve_point(*outcome.model_fit, model_parameters(outcome.model_fit->spec), convention, frequency_hz);
}

namespace {

// A one-sigma error so small against the spectrum's values that the chi-square would overflow a double
// (the largest |y| over it above 1e100; the residuals and the Jacobian's rows are scaled by 1/error)
// leaves the fit without a meaning: it is refused with its pointer, instead of a 200 whose numbers
// come from infinities. The ratio does not depend on the unit (y and y_error share it).
void require_usable_errors(const SpectrumInput& spectrum) {
  constexpr double kLargestValueOverError = 1e100;
  if (spectrum.y_error.size() != spectrum.y.size()) return;  // prepare_spectrum says what is wrong
  double largest = 0.0;
  for (const double v : spectrum.y) {
    if (std::isfinite(v)) largest = std::max(largest, std::abs(v));
  }
  for (std::size_t i = 0; i < spectrum.y_error.size(); ++i) {
    const double error = spectrum.y_error[i];
    if (error > 0.0 && std::isfinite(error) && !(largest / error <= kLargestValueOverError)) {
      throw ProblemError(invalid_value("/spectrum/y_error/" + std::to_string(i),
                                       "is too small against the spectrum's values (the largest |y| is more than 1e100 "
                                       "times this error): the chi-square would overflow a double"));
    }
  }
}

// The same for band measurements (flux densities or magnitudes, upper limits too): an error more than
// 1e100 times smaller than the largest |value| (or than 1, for values below 1) is refused at
// /photometry/<i>/error; it made a 200 of 10.4 K from infinities.
void require_usable_errors(const PhotometryInput& photometry) {
  constexpr double kLargestValueOverError = 1e100;
  double largest = 1.0;
  for (const auto& m : photometry.measurements) {
    if (std::isfinite(m.value)) largest = std::max(largest, std::abs(m.value));
  }
  for (std::size_t i = 0; i < photometry.measurements.size(); ++i) {
    const std::optional<double>& error = photometry.measurements[i].error;
    if (error && *error > 0.0 && std::isfinite(*error) && !(largest / *error <= kLargestValueOverError)) {
      throw ProblemError(invalid_value("/photometry/" + std::to_string(i) + "/error",
                                       "is too small against the measurements (more than 1e100 times smaller than "
                                       "the largest value): the chi-square would overflow a double"));
    }
  }
}

}  // namespace

FitOutcome fit_outcome(FitRequest request, const ServiceLimits& limits) {
  apply_limits(limits, request);
  FitOutcome out;
  try {
    std::optional<Distance> distance;
    if (request.distance) {
      distance = Distance{request.distance->value * parse_length_unit(request.distance->unit),
                          request.distance->error / request.distance->value};
    }
    if (request.photometry) {
      out.photometry = prepare_photometry(request.photometry->input);  // its own problems first
      require_usable_errors(request.photometry->input);
      out.unit = parse_flux_density_unit(out.photometry->per_steradian ? "MJy/sr" : "Jy");
    } else {
      out.spectrum = prepare_spectrum(request.spectrum);  // its own problems first
      require_usable_errors(request.spectrum);
      out.unit = out.spectrum->y_unit;
    }
    if (request.plain()) {
      fit_plain_planck(out, request, distance);
    } else {
      fit_model_family(out, request, distance);
    }
  } catch (const InputError& e) {
    throw problem_for(e);
  }
  out.request = std::move(request);
  return out;
}

nlohmann::ordered_json fit(FitRequest request, const ServiceLimits& limits) {
  return fit_outcome(std::move(request), limits).response;
}

nlohmann::ordered_json fit_json_text(std::string_view text, const ServiceLimits& limits) {
  return fit(parse_fit_request(text), limits);
}

nlohmann::ordered_json fit_document(const nlohmann::json& document, const ServiceLimits& limits) {
  return fit(parse_fit_request(document), limits);
}

namespace {

FitOutcome spectrum_table_outcome(std::string_view text, const TableRequestOptions& options,
                                  const nlohmann::json& extra_request_members, const ServiceLimits& limits) {
  const Table table = read_table(text);
  FitRequest request;
  request.spectrum = table_to_spectrum(table, options);
  try {
    // Query parameters are decoded bytes: not UTF-8 is replaced, and refused as a value (see parse_fit_request).
    if (!extra_request_members.empty()) {
      apply_request_members(extra_request_members.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace), request);
    }
    return fit_outcome(std::move(request), limits);
  } catch (ProblemError& e) {
    Problem& problem = e.problem();
    if (problem.pointer) problem.line = table_line_of(*problem.pointer, table);
    throw;
  }
}

}  // namespace

nlohmann::ordered_json fit_table_text(std::string_view text, const TableRequestOptions& options,
                                      const nlohmann::json& extra_request_members, const ServiceLimits& limits) {
  return spectrum_table_outcome(text, options, extra_request_members, limits).response;
}

namespace {

// A photometry table becomes the request document {"photometry": [...], "model", "options"}, so it is
// checked exactly as JSON is; problems with a measurement carry its line.
FitOutcome photometry_table_outcome(std::string_view text, const nlohmann::json& extra_request_members,
                                   const ServiceLimits& limits) {
  const PhotometryTable table = read_photometry_table(text);
  nlohmann::json document = extra_request_members;
  document["photometry"] = table.measurements;
  try {
    return fit_outcome(parse_fit_request(document), limits);
  } catch (ProblemError& e) {
    Problem& problem = e.problem();
    const std::string prefix = "/photometry/";
    if (problem.pointer && problem.pointer->rfind(prefix, 0) == 0) {
      const std::string rest = problem.pointer->substr(prefix.size());
      const std::string row = rest.substr(0, rest.find('/'));
      if (!row.empty() && row.size() < 10 && row.find_first_not_of("0123456789") == std::string::npos &&
          std::stoul(row) < table.line_of_row.size()) {
        problem.line = table.line_of_row[std::stoul(row)];
      }
    }
    throw;
  }
}

}  // namespace

namespace {

// Problems with a member that a named parameter set name the parameter instead of the pointer.
template <class Fit>
FitOutcome naming_parameters(Fit&& fit) {
  try {
    return fit();
  } catch (ProblemError& e) {
    Problem& problem = e.problem();
    if (problem.pointer && !problem.line) {
      if (auto parameter = parameter_of(*problem.pointer)) {
        problem.parameter = std::move(parameter);
        problem.pointer.reset();
      }
    }
    throw;
  }
}

}  // namespace

FitOutcome fit_table_outcome(std::string_view text, const TableParameters& parameters, const ServiceLimits& limits) {
  const bool photometry = is_photometry_table(text);
  const TableSettings settings = table_settings(parameters, photometry, true);
  return naming_parameters([&] {
    return photometry ? photometry_table_outcome(text, settings.extra, limits)
                      : spectrum_table_outcome(text, settings.table, settings.extra, limits);
  });
}

nlohmann::ordered_json fit_table_text(std::string_view text, const TableParameters& parameters,
                                      const ServiceLimits& limits) {
  return fit_table_outcome(text, parameters, limits).response;
}

FitOutcome fit_fits_outcome(std::string_view bytes, const TableParameters& parameters, const ServiceLimits& limits) {
  FitsOptions fits;
  TableParameters rest;
  for (const auto& [name, value] : parameters) {
    if (name == "hdu") fits.hdu = value;
    else if (name == "x_column") fits.x_column = value;
    else if (name == "y_column") fits.y_column = value;
    else if (name == "error_column") fits.error_column = value;
    else if (name == "error_hdu") fits.error_hdu = value;
    else if (name == "x_unit") fits.x_unit = value;
    else if (name == "y_unit") fits.y_unit = value;
    else rest.emplace_back(name, value);
  }
  const FitsContent content = read_fits(bytes, fits);
  const TableSettings settings = table_settings(rest, content.photometry.has_value(), false);
  FitOutcome outcome = naming_parameters([&] {
    if (content.photometry) {
      nlohmann::json document = settings.extra;
      document["photometry"] = *content.photometry;
      return fit_outcome(parse_fit_request(document), limits);
    }
    FitRequest request;
    request.spectrum = *content.spectrum;
    apply_request_members(settings.extra.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace), request);
    return fit_outcome(std::move(request), limits);
  });
  outcome.response["input"]["fits"] = content.notes;
  return outcome;
}

nlohmann::ordered_json fit_fits(std::string_view bytes, const TableParameters& parameters, const ServiceLimits& limits) {
  return fit_fits_outcome(bytes, parameters, limits).response;
}

const std::vector<std::string>& fits_parameter_names() {
  static const std::vector<std::string> kNames = {
      "hdu", "x_column", "y_column", "error_column", "error_hdu", "x_unit", "y_unit", "model", "opacity", "redshift",
      "extinction", "r_v", "fix", "loss", "loss_scale", "exclude", "distance", "temperature_min", "temperature_max",
      "time_budget_seconds", "systematic_error", "intervals", "seed"};
  return kNames;
}

const std::vector<std::string>& table_parameter_names() {
  static const std::vector<std::string> kNames = {
      "x_unit", "y_unit", "x_column", "y_column", "error_column", "model", "opacity", "redshift", "extinction", "r_v",
      "fix", "loss", "loss_scale", "exclude", "distance", "temperature_min", "temperature_max", "time_budget_seconds",
      "systematic_error", "intervals", "seed"};
  return kNames;
}

namespace {

// The "id" of a batch line whose request was refused while it was read (e.g. an unknown band): the
// answer line still carries it when the line is a JSON object with exactly one valid id.
std::optional<nlohmann::ordered_json> id_of_line(std::string_view line) {
  try {
    simdjson::dom::object object;
    if (json_reading::parse_text(line).get_object().get(object)) return std::nullopt;
    std::optional<nlohmann::ordered_json> id;
    for (const auto field : object) {
      if (field.key != "id") continue;
      if (id) return std::nullopt;  // two ids: neither is the line's
      id = json_reading::request_id(field.value);
    }
    return id;
  } catch (const ProblemError&) {
    return std::nullopt;
  }
}

}  // namespace

nlohmann::ordered_json fit_batch_line(std::string_view line, std::size_t index, const ServiceLimits& limits) {
  nlohmann::ordered_json out;
  out["index"] = index;
  std::optional<nlohmann::ordered_json> id;
  try {
    FitRequest request = parse_fit_request(line);
    id = request.id;
    nlohmann::ordered_json response = fit(std::move(request), limits);
    if (id) out["id"] = *id;
    out["status"] = 200;
    out["response"] = std::move(response);
  } catch (const ProblemError& e) {
    if (!id) id = id_of_line(line);
    if (id) out["id"] = *id;
    out["status"] = e.problem().status;
    out["problem"] = e.problem().to_json();
  }
  return out;
}

}  // namespace planckton::api
