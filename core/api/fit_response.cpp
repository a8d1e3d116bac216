#include "api/fit_response.h"

#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>

#include "api/catalogue.h"
#include "science/constants.h"

namespace planckton::api {

namespace {

using json = nlohmann::ordered_json;

// IAU 2015 Resolution B3 nominal solar values.
constexpr double kNominalSolarRadius = 6.957e8;        // m
constexpr double kNominalSolarLuminosity = 3.828e26;   // W
constexpr double kMilliarcsecondsPerRadian = 180.0 / std::numbers::pi * 3600.0 * 1000.0;
constexpr double kNanometresPerMetre = 1e9;

json optional_number(const std::optional<double>& value, double factor = 1.0) {
  return value ? json(*value * factor) : json(nullptr);
}

json interval(const std::optional<std::array<double, 2>>& bounds, double factor) {
  if (!bounds) return nullptr;
  const auto end = [&](double v) { return std::isfinite(v) ? json(v * factor) : json(nullptr); };
  return json::array({end((*bounds)[0]), end((*bounds)[1])});
}

}  // namespace

nlohmann::ordered_json estimate_json(const Estimate& e, const char* unit, double factor) {
  json doc = {{"value", e.value * factor},
              {"unit", unit},
              {"error", optional_number(e.error, factor)},
              {"interval_68", interval(e.interval_68, factor)},
              {"interval_95", interval(e.interval_95, factor)}};
  if (e.median) doc["median"] = *e.median * factor;
  // A one-sided limit: the open end of each interval is null (NaN), the other is the limit.
  if (e.one_sided != OneSided::kNo) doc["one_sided"] = e.one_sided == OneSided::kLowerLimit ? "lower_limit" : "upper_limit";
  return doc;
}

namespace {

// Wavelength intervals come out of the monomial map in increasing order already (exp is monotone
// and the bounds are built as value * exp(-+sigma)).
json peak_json(const PeakEstimate& peak) {
  json doc = peak.reported_as_wavelength ? estimate_json(peak.wavelength_m, "nm", kNanometresPerMetre)
                                         : estimate_json(peak.frequency_hz, "Hz");
  if (peak.reported_as_wavelength) {
    doc["frequency"] = peak.frequency_hz.value;
  } else {
    doc["wavelength_nm"] = peak.wavelength_m.value * kNanometresPerMetre;
  }
  doc["reduced_frequency"] = peak.reduced_frequency;
  doc["curve"] = peak.description;
  return doc;
}

const char* data_peak_id(Convention convention) {
  switch (convention) {
    case Convention::kEnergyPerWavelength: return "wavelength";
    case Convention::kPhotonsPerWavelength: return "photon_wavelength";
    case Convention::kPhotonsPerFrequency:
    case Convention::kPhotonsPerWavenumber:
    case Convention::kPhotonsPerPhotonEnergy: return "photon_frequency";
    default: return "frequency";
  }
}

json scale_json(const Estimate& scale, const FluxDensityUnit& unit) {
  if (unit.relative) {
    json doc = estimate_json(scale, "relative");
    doc["meaning"] = "arbitrary normalisation of a relative spectrum";
    return doc;
  }
  if (unit.per_steradian) {
    json doc = estimate_json(scale, "1");
    doc["meaning"] = "emissivity (grey-body factor): measured radiance over black-body radiance";
    return doc;
  }
  json doc = estimate_json(scale, "sr");
  doc["meaning"] = "solid angle subtended by the source (pi theta^2 for a uniform disc)";
  return doc;
}

json derived_json(const DerivedQuantities& d) {
  json doc = json::object();
  if (d.bolometric_flux_w_m2) doc["bolometric_flux"] = estimate_json(*d.bolometric_flux_w_m2, "W/m2");
  if (d.bolometric_radiance_w_m2_sr) {
    doc["bolometric_radiance"] = estimate_json(*d.bolometric_radiance_w_m2_sr, "W/m2/sr");
  }
  if (d.angular_radius_rad) doc["angular_radius"] = estimate_json(*d.angular_radius_rad, "mas", kMilliarcsecondsPerRadian);
  if (d.radius_m) {
    doc["radius"] = estimate_json(*d.radius_m, "m");
    doc["radius"]["solar_radii"] = d.radius_m->value / kNominalSolarRadius;
  }
  if (d.luminosity_w) {
    doc["luminosity"] = estimate_json(*d.luminosity_w, "W");
    doc["luminosity"]["solar_luminosities"] = d.luminosity_w->value / kNominalSolarLuminosity;
  }
  return doc;
}

}  // namespace

namespace {

// What the statistics member needs from either kind of fit.
struct Goodness {
  std::optional<double> chi_square;
  int degrees_of_freedom = 0;
  std::optional<double> p_value;
  std::size_t points_used = 0;
  bool errors_estimated = false;
  double residual_scatter = 0.0;  // spectra: SI of y; bands: fraction of flux
  double robust_cost = 0.0;
};

Goodness goodness_of(const PlanckFitResult& fit) {
  return {fit.chi_square, fit.degrees_of_freedom, fit.p_value, fit.points_used, fit.errors_estimated,
          fit.residual_scatter_si, fit.robust_cost};
}

Goodness goodness_of(const ModelFitResult& fit) {
  return {fit.chi_square, fit.degrees_of_freedom, fit.p_value, fit.points_used, fit.errors_estimated,
          fit.residual_scatter, fit.robust_cost};
}

json chi_square_members(const Goodness& g) {
  json doc = {{"chi_square", optional_number(g.chi_square)},
              {"degrees_of_freedom", g.degrees_of_freedom},
              {"reduced_chi_square", nullptr},
              {"p_value", optional_number(g.p_value)}};
  if (g.chi_square && g.degrees_of_freedom > 0) doc["reduced_chi_square"] = *g.chi_square / g.degrees_of_freedom;
  return doc;
}

json spectrum_statistics(const FitRequest& request, const MeasuredSpectrum& spectrum, const Goodness& g) {
  json doc = chi_square_members(g);
  doc["points_given"] = spectrum.points_given;
  doc["points_excluded"] = spectrum.points_excluded;
  doc["points_used"] = g.points_used;
  doc["errors"] = g.errors_estimated ? "estimated from the residuals" : "given";
  if (g.errors_estimated) {
    doc["residual_scatter"] = {{"value", g.residual_scatter / spectrum.y_unit.to_si}, {"unit", spectrum.y_unit.text}};
  }
  if (request.fit_options.loss != RobustLoss::kNone) {
    doc["robust_loss"] = {{"kind", request.loss_name}, {"scale", request.fit_options.loss_scale}, {"cost", g.robust_cost}};
  }
  return doc;
}

json photometry_statistics(const MeasuredPhotometry& data, const Goodness& g) {
  json doc = chi_square_members(g);
  doc["bands_given"] = data.bands.size();
  doc["detections"] = data.detections;
  doc["upper_limits"] = data.upper_limits;
  doc["points_used"] = g.points_used;
  doc["errors"] = g.errors_estimated ? "estimated from the residuals" : "given";
  if (g.errors_estimated) doc["residual_scatter"] = {{"value", g.residual_scatter}, {"unit", "fraction of flux"}};
  if (data.upper_limits > 0) {
    doc["upper_limit_terms"] = "chi_square includes -2 ln Phi((limit - model) / sigma) for each upper limit "
                               "(censored data, Sawicki 2012, PASP 124, 1208)";
  }
  return doc;
}

json spectrum_input(const MeasuredSpectrum& spectrum) {
  return {{"x_unit", spectrum.x_unit.text},
          {"y_unit", spectrum.y_unit.text},
          {"convention", std::string(convention_name(spectrum.y_unit.convention)) +
                             (spectrum.y_unit.per_steradian ? ", per steradian" : "")}};
}

json photometry_input(const FitRequest& request, const MeasuredPhotometry& data, const FluxDensityUnit& unit) {
  std::size_t nodes = 0;
  for (const BandMeasurement& b : data.bands) nodes += b.quadrature.frequency_hz.size();
  return {{"photometry", data.bands.size()},
          {"convention", std::string(convention_name(unit.convention)) + (unit.per_steradian ? ", per steradian" : "") +
                             " (each band's quoted flux density)"},
          {"band_integration", "product integration through each band's response: " + std::to_string(nodes) +
                                   " nodes in all (Gauss-Legendre in ln wavelength)"},
          {"systematic_error", request.photometry->input.systematic_fraction}};
}

}  // namespace

nlohmann::ordered_json statistics_json(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                       const PlanckFitResult& fit) {
  return spectrum_statistics(request, spectrum, goodness_of(fit));
}

nlohmann::ordered_json warnings_json(const std::vector<FitWarning>& warnings) {
  json list = json::array();
  for (const FitWarning& w : warnings) list.push_back({{"code", w.code}, {"message", w.message}});
  return list;
}

nlohmann::ordered_json provenance_json() {
  return {{"version", PLANCKTON_VERSION}, {"constants", constants::kSource}, {"solver", "Ceres Solver"}};
}

namespace {

// The document both fits share; `statistics` and `input` describe the data.
json response_document(const FitRequest& request, const FluxDensityUnit& unit, const PlanckFitResult& fit,
                       const DerivedQuantities& derived, json statistics, json input, std::optional<json> bands) {
  json peaks = json::object();
  for (const PeakEstimate& peak : derived.peaks) peaks[peak.id] = peak_json(peak);
  peaks["of_data"] = data_peak_id(unit.convention);

  const double correlation = fit.covariance_available ? fit.log_correlation() : 0.0;
  json response;
  if (request.id) response["id"] = *request.id;
  response["model"] = request.model.kind_name;
  response["status"] = fit.converged ? "converged" : "not_converged";
  response["parameters"] = {{"temperature", estimate_json(derived.temperature_k, "K")},
                            {"scale", scale_json(derived.scale, unit)}};
  response["correlation"] = fit.covariance_available
                                ? json{{"parameters", {"temperature", "scale"}},
                                       {"matrix", {{1.0, correlation}, {correlation, 1.0}}},
                                       {"space", "ln temperature, ln scale (the fitted parameters)"}}
                                : json(nullptr);
  response["peaks"] = peaks;
  response["derived"] = derived_json(derived);
  if (bands) response["bands"] = std::move(*bands);
  response["statistics"] = std::move(statistics);
  response["intervals"] = {
      {"method", "covariance"},
      {"description", "linearised (Gaussian) errors from the covariance matrix; intervals are Gaussian in "
                      "the logarithm of each positive quantity, at 1 and 2 sigma"},
      {"levels", {{"interval_68", 0.682689492137086}, {"interval_95", 0.954499736103642}}}};
  response["input"] = std::move(input);
  response["solver"] = {{"termination", fit.termination},
                        {"iterations", fit.iterations},
                        {"message", fit.solver_message},
                        {"start_temperature", fit.start_temperature_k}};
  response["warnings"] = warnings_json(fit.warnings);
  response["provenance"] = provenance_json();
  return response;
}

// A measurement-space value in the caller's unit.
double in_given_unit(const BandMeasurement& m, double value) {
  return m.scale == MeasurementScale::kFluxDensity ? value / m.unit_to_si : value;
}

json band_json(const BandMeasurement& m, const BandMeasurementInput& given, const BandFit& fit) {
  json doc = {{"band", m.band->id},
              {"pivot_wavelength_nm", m.quadrature.pivot_wavelength_m * kNanometresPerMetre},
              {"quoted", quoted_flux_json(m.quoted)},
              {"unit", m.unit},
              {"value", given.value},
              {"error", given.error ? json(*given.error) : json(nullptr)},
              {"sigma_used", m.error > 0.0 ? json(in_given_unit(m, m.error)) : json(nullptr)},
              {"upper_limit", m.upper_limit},
              {"model", in_given_unit(m, fit.model)},
              {"residual", fit.residual},
              {"model_at_quoted_wavelength", in_given_unit(m, fit.model_monochromatic)}};
  if (m.scale != MeasurementScale::kFluxDensity) {
    doc["zero_point"] = {{"value", m.zero_point_si / 1e-26}, {"unit", "Jy"}, {"source", m.zero_point_source}};
  }
  return doc;
}

}  // namespace

namespace {

json bands_json(const FitRequest& request, const MeasuredPhotometry& data, const std::vector<BandFit>& fits) {
  json bands = json::array();
  for (std::size_t b = 0; b < data.bands.size(); ++b) {
    bands.push_back(band_json(data.bands[b], request.photometry->input.measurements[b], fits[b]));
  }
  return bands;
}

}  // namespace

nlohmann::ordered_json make_fit_response(const FitRequest& request, const MeasuredSpectrum& spectrum, const PlanckFitResult& fit,
                       const DerivedQuantities& derived) {
  return response_document(request, spectrum.y_unit, fit, derived, spectrum_statistics(request, spectrum, goodness_of(fit)),
                           spectrum_input(spectrum), std::nullopt);
}

nlohmann::ordered_json make_photometry_response(const FitRequest& request, const MeasuredPhotometry& data,
                                                const PhotometryFitResult& result, const FluxDensityUnit& unit,
                                                const DerivedQuantities& derived) {
  return response_document(request, unit, result.fit, derived, photometry_statistics(data, goodness_of(result.fit)),
                           photometry_input(request, data, unit), bands_json(request, data, result.bands));
}

namespace {

// ---- the model family's document ----------------------------------------------------------

constexpr double kNominalSolarMass = 1.98840987e30;  // kg; IAU 2015 B3 nominal GM_sun / G (CODATA 2018 G)

const char* parameter_unit(const ParameterInfo& info, const FluxDensityUnit& unit) {
  if (!info.unit.empty()) return info.unit.c_str();
  return unit.relative ? "relative" : unit.per_steradian ? "1" : "sr";
}

json parameter_json(const FittedParameter& p, const Estimate& e, const FluxDensityUnit& unit, const ModelSpec& spec) {
  json doc = estimate_json(e, parameter_unit(p.info, unit));
  if (spec.kind == ModelKind::kPlanck && p.info.role == ParameterRole::kScale) {
    doc["meaning"] = scale_json(e, unit)["meaning"];
  } else {
    doc["meaning"] = p.info.meaning;
  }
  doc["fixed"] = p.fixed;
  doc["at_bound"] = p.at_bound;
  if (!p.fixed) doc["bounds"] = {std::isfinite(p.lower) ? json(p.lower) : json(nullptr), std::isfinite(p.upper) ? json(p.upper) : json(nullptr)};
  if (p.prior) doc["prior"] = {{"kind", "gaussian"}, {"mean", p.prior->mean}, {"sigma", p.prior->sigma}};
  return doc;
}

// of_data names the peak of the data's convention, when the curve has one there.
json peaks_json(const std::vector<PeakEstimate>& peaks, std::optional<Convention> of_data) {
  json doc = json::object();
  for (const PeakEstimate& peak : peaks) doc[peak.id] = peak_json(peak);
  if (of_data && doc.contains(data_peak_id(*of_data))) doc["of_data"] = data_peak_id(*of_data);
  return doc;
}

json model_correlation_json(const ModelFitResult& fit) {
  if (!fit.covariance_available) return nullptr;
  json names = json::array();
  for (std::size_t p : fit.free) names.push_back(fit.parameters[p].info.name);
  json matrix = json::array();
  for (std::size_t a = 0; a < fit.free.size(); ++a) {
    json row = json::array();
    for (std::size_t b = 0; b < fit.free.size(); ++b) row.push_back(fit.correlation_at(a, b));
    matrix.push_back(std::move(row));
  }
  return {{"parameters", std::move(names)},
          {"matrix", std::move(matrix)},
          {"space", "ln of the positive parameters (temperatures, scales, frequencies), beta and color_excess as they "
                    "are: the fitted parameters"}};
}

json model_derived_json(const ModelQuantities& q) {
  DerivedQuantities d;
  d.bolometric_flux_w_m2 = q.bolometric_flux_w_m2;
  d.bolometric_radiance_w_m2_sr = q.bolometric_radiance_w_m2_sr;
  d.angular_radius_rad = q.angular_radius_rad;
  d.radius_m = q.radius_m;
  d.luminosity_w = q.luminosity_w;
  json doc = derived_json(d);
  if (q.dust_mass_kg) {
    doc["dust_mass"] = estimate_json(*q.dust_mass_kg, "kg");
    doc["dust_mass"]["solar_masses"] = q.dust_mass_kg->value / kNominalSolarMass;
  }
  return doc;
}

json components_json(const ModelQuantities& q, const FluxDensityUnit& unit) {
  json list = json::array();
  const char* labels[] = {"cooler", "warmer"};
  for (std::size_t c = 0; c < q.components.size(); ++c) {
    const ComponentQuantities& component = q.components[c];
    json doc = {{"component", labels[c]},
                {"temperature", estimate_json(component.temperature_k, "K")},
                {"peaks", peaks_json(component.peaks, std::nullopt)}};
    if (!unit.relative) {
      doc["bolometric_flux"] = estimate_json(component.bolometric_flux, unit.per_steradian ? "W/m2/sr" : "W/m2");
      doc["share_of_bolometric_flux"] = component.share;
    }
    if (component.angular_radius_rad) doc["angular_radius"] = estimate_json(*component.angular_radius_rad, "mas", kMilliarcsecondsPerRadian);
    list.push_back(std::move(doc));
  }
  return list;
}

json frames_json(const ModelFitResult& fit, const ModelQuantities& q) {
  json observed = json::object(), rest = json::object();
  std::size_t t = 0;
  for (std::size_t i = 0; i < fit.parameters.size(); ++i) {
    const FittedParameter& p = fit.parameters[i];
    if (p.info.role != ParameterRole::kTemperature) continue;
    rest[p.info.name] = estimate_json(q.parameters[i], "K");
    if (t < q.observed_temperatures_k.size()) observed[p.info.name] = estimate_json(q.observed_temperatures_k[t++], "K");
  }
  return {{"redshift", fit.spec.redshift},
          {"rest", {{"meaning", "in the source's rest frame: the fitted parameters (temperatures, beta, turnover_frequency)"},
                    {"temperatures", rest},
                    {"peaks", peaks_json(q.rest_frame_peaks, std::nullopt)}}},
          {"observed", {{"meaning", "as observed: a black body at T stays one at T / (1 + z) with the same solid angle; "
                                    "the response's peaks and bolometric flux are observed-frame"},
                        {"temperatures", observed}}}};
}

json extinction_json(const ExtinctionSpec& e) {
  const ExtinctionLawInfo& info = extinction_law_info(e.law);
  return {{"law", info.id},
          {"citation", info.citation},
          {"r_v", e.r_v},
          {"frame", e.frame == ExtinctionFrame::kObserved ? "observed" : "rest"},
          {"range_um", extinction_range_um(info)},
          {"meaning", "F_observed = F_intrinsic 10^(-0.4 color_excess r_v A_lambda/A_V); peaks and bolometric fluxes are "
                      "of the intrinsic (dereddened) curve"}};
}

json intervals_json(const FitRequest& request, const ModelFitResult& fit, const ModelIntervals& intervals) {
  const json levels = {{"interval_68", 0.682689492137086}, {"interval_95", 0.954499736103642}};
  switch (request.intervals.method) {
    case IntervalMethod::kCovariance:
      return {{"method", "covariance"},
              {"description", "linearised (Gaussian) errors from the covariance matrix of the free parameters; intervals "
                              "are Gaussian in the logarithm of each positive quantity (symmetric for beta and "
                              "color_excess), at 1 and 2 sigma; derived quantities by the delta method"},
              {"levels", levels}};
    case IntervalMethod::kProfile:
      return {{"method", "profile"},
              {"description", "profile likelihood: where -2 ln p, minimised over the other parameters, rises by 1 and 4 "
                              "(Wilks 1938); a side that does not rise before the parameter's bound is open (null) and "
                              "the interval is then a half-line (its lower end, read as a limit, holds at the one-sided "
                              "level over repeated experiments: Feldman & Cousins 1998); derived quantities span their "
                              "values over the profile points (exact for a quantity of one parameter, an envelope "
                              "otherwise); error is the linearised one"},
              {"levels", levels},
              {"one_sided_levels", {{"interval_68", 0.841344746068543}, {"interval_95", 0.977249868051821}}},
              {"thresholds", {1.0, 4.0}},
              {"profile_evaluations", intervals.profile_evaluations}};
    case IntervalMethod::kPosterior: break;
  }
  const EnsembleSamplerResult& chain = *intervals.chain;
  json tau = json::object();
  for (std::size_t i = 0; i < fit.free.size() && i < chain.autocorrelation_time.size(); ++i) {
    tau[fit.parameters[fit.free[i]].info.name] = chain.autocorrelation_time[i];
  }
  const EnsembleSamplerOptions& sampler = request.intervals.sampler;
  json doc = {
      {"method", "posterior"},
      {"description", "affine-invariant ensemble sampler (Goodman & Weare 2010, CAMCOS 5, 65; stretch move, two "
                      "half-ensembles): median and the 15.87/84.13 and 2.275/97.725 percentiles over the draws; value "
                      "stays the best fit, error the linearised one"},
      {"levels", levels},
      {"prior", request.intervals.prior == PosteriorPrior::kJeffreys ? "jeffreys" : "flat"},
      {"prior_description",
       request.intervals.prior == PosteriorPrior::kJeffreys
           ? "Jeffreys' prior (Jeffreys 1946), sqrt(det J^T J) of the residuals' Jacobian in the free parameters, inside "
             "the bounds, times the model's Gaussian priors"
           : "flat in the solver's space (ln T, ln scale, ln turnover_frequency; beta and color_excess as they are) "
             "inside the bounds, times the model's Gaussian priors"},
      {"seed", sampler.seed},
      {"walkers", sampler.walkers},
      {"steps", sampler.steps},
      {"steps_taken", chain.steps_taken},
      {"burn_in", sampler.burn_in},
      {"draws", chain.kept_draws},
      {"acceptance_fraction", chain.acceptance_fraction},
      {"autocorrelation_time", tau},
      {"converged", chain.converged},
      {"evaluations", chain.evaluations}};
  if (!intervals.returned_samples.empty()) {
    json names = json::array();
    for (std::size_t p : fit.free) names.push_back(fit.parameters[p].info.name);
    doc["samples"] = {{"parameters", names}, {"draws", intervals.returned_samples}};
  }
  return doc;
}

json model_document(const FitRequest& request, const FluxDensityUnit& unit, Convention data_convention,
                    const ModelFitResult& fit, const ModelIntervals& intervals, json statistics, json input,
                    std::optional<json> bands) {
  const ModelQuantities& q = intervals.quantities;
  json response;
  if (request.id) response["id"] = *request.id;
  response["model"] = request.model.kind_name;
  response["status"] = fit.converged ? "converged" : "not_converged";
  json parameters = json::object();
  for (std::size_t i = 0; i < fit.parameters.size(); ++i) {
    parameters[fit.parameters[i].info.name] = parameter_json(fit.parameters[i], q.parameters[i], unit, fit.spec);
  }
  response["parameters"] = std::move(parameters);
  response["correlation"] = model_correlation_json(fit);
  response["peaks"] = peaks_json(q.peaks, data_convention);
  if (!q.components.empty()) response["components"] = components_json(q, unit);
  if (fit.spec.redshift > 0.0) response["frames"] = frames_json(fit, q);
  if (fit.spec.extinction) response["extinction"] = extinction_json(*fit.spec.extinction);
  response["derived"] = model_derived_json(q);
  if (bands) response["bands"] = std::move(*bands);
  if (fit.prior_chi_square > 0.0 || std::any_of(fit.parameters.begin(), fit.parameters.end(), [](const FittedParameter& p) { return p.prior.has_value(); })) {
    statistics["prior_chi_square"] = fit.prior_chi_square;
    statistics["priors"] = "each Gaussian prior adds ((value - mean) / sigma)^2 to the minimised sum; chi_square and "
                           "p_value are of the data alone";
  }
  response["statistics"] = std::move(statistics);
  response["intervals"] = intervals_json(request, fit, intervals);
  response["input"] = std::move(input);
  response["solver"] = {{"termination", fit.termination}, {"iterations", fit.iterations}, {"message", fit.solver_message}};
  std::vector<FitWarning> warnings = fit.warnings;
  warnings.insert(warnings.end(), intervals.warnings.begin(), intervals.warnings.end());
  response["warnings"] = warnings_json(warnings);
  if (!q.notes.empty()) response["notes"] = q.notes;
  response["provenance"] = provenance_json();
  return response;
}

}  // namespace

nlohmann::ordered_json make_model_response(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                           const ModelFitResult& fit, const ModelIntervals& intervals) {
  return model_document(request, spectrum.y_unit, spectrum.y_unit.convention, fit, intervals,
                        spectrum_statistics(request, spectrum, goodness_of(fit)), spectrum_input(spectrum), std::nullopt);
}

nlohmann::ordered_json make_model_photometry_response(const FitRequest& request, const MeasuredPhotometry& data,
                                                      const std::vector<BandFit>& bands, const FluxDensityUnit& unit,
                                                      const ModelFitResult& fit, const ModelIntervals& intervals) {
  return model_document(request, unit, unit.convention, fit, intervals, photometry_statistics(data, goodness_of(fit)),
                        photometry_input(request, data, unit), bands_json(request, data, bands));
}

}  // namespace planckton::api
