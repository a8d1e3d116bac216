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
  return bounds ? json::array({(*bounds)[0] * factor, (*bounds)[1] * factor}) : json(nullptr);
}

}  // namespace

nlohmann::ordered_json estimate_json(const Estimate& e, const char* unit, double factor) {
  return {{"value", e.value * factor},
          {"unit", unit},
          {"error", optional_number(e.error, factor)},
          {"interval_68", interval(e.interval_68, factor)},
          {"interval_95", interval(e.interval_95, factor)}};
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

nlohmann::ordered_json statistics_json(const FitRequest& request, const MeasuredSpectrum& spectrum,
                                       const PlanckFitResult& fit) {
  json doc = {{"chi_square", optional_number(fit.chi_square)},
              {"degrees_of_freedom", fit.degrees_of_freedom},
              {"reduced_chi_square", nullptr},
              {"p_value", optional_number(fit.p_value)},
              {"points_given", spectrum.points_given},
              {"points_excluded", spectrum.points_excluded},
              {"points_used", fit.points_used},
              {"errors", fit.errors_estimated ? "estimated from the residuals" : "given"}};
  if (fit.chi_square && fit.degrees_of_freedom > 0) doc["reduced_chi_square"] = *fit.chi_square / fit.degrees_of_freedom;
  if (fit.errors_estimated) {
    doc["residual_scatter"] = {{"value", fit.residual_scatter_si / spectrum.y_unit.to_si},
                               {"unit", spectrum.y_unit.text}};
  }
  if (request.fit_options.loss != RobustLoss::kNone) {
    doc["robust_loss"] = {{"kind", request.loss_name}, {"scale", request.fit_options.loss_scale},
                          {"cost", fit.robust_cost}};
  }
  return doc;
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
  response["model"] = request.model_kind;
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

nlohmann::ordered_json make_fit_response(const FitRequest& request, const MeasuredSpectrum& spectrum, const PlanckFitResult& fit,
                       const DerivedQuantities& derived) {
  json input = {{"x_unit", spectrum.x_unit.text},
                {"y_unit", spectrum.y_unit.text},
                {"convention", std::string(convention_name(spectrum.y_unit.convention)) +
                                   (spectrum.y_unit.per_steradian ? ", per steradian" : "")}};
  return response_document(request, spectrum.y_unit, fit, derived, statistics_json(request, spectrum, fit),
                           std::move(input), std::nullopt);
}

nlohmann::ordered_json make_photometry_response(const FitRequest& request, const MeasuredPhotometry& data,
                                                const PhotometryFitResult& result, const FluxDensityUnit& unit,
                                                const DerivedQuantities& derived) {
  const PlanckFitResult& fit = result.fit;
  json bands = json::array();
  std::size_t nodes = 0;
  for (std::size_t b = 0; b < data.bands.size(); ++b) {
    bands.push_back(band_json(data.bands[b], request.photometry->input.measurements[b], result.bands[b]));
    nodes += data.bands[b].quadrature.frequency_hz.size();
  }
  json statistics = {{"chi_square", optional_number(fit.chi_square)},
                     {"degrees_of_freedom", fit.degrees_of_freedom},
                     {"reduced_chi_square", nullptr},
                     {"p_value", optional_number(fit.p_value)},
                     {"bands_given", data.bands.size()},
                     {"detections", data.detections},
                     {"upper_limits", data.upper_limits},
                     {"points_used", fit.points_used},
                     {"errors", fit.errors_estimated ? "estimated from the residuals" : "given"}};
  if (fit.chi_square && fit.degrees_of_freedom > 0) statistics["reduced_chi_square"] = *fit.chi_square / fit.degrees_of_freedom;
  if (fit.errors_estimated) statistics["residual_scatter"] = {{"value", fit.residual_scatter_si}, {"unit", "fraction of flux"}};
  if (data.upper_limits > 0) {
    statistics["upper_limit_terms"] = "chi_square includes -2 ln Phi((limit - model) / sigma) for each upper limit "
                                      "(censored data, Sawicki 2012, PASP 124, 1208)";
  }
  json input = {{"photometry", data.bands.size()},
                {"convention", std::string(convention_name(unit.convention)) + (unit.per_steradian ? ", per steradian" : "") +
                                   " (each band's quoted flux density)"},
                {"band_integration", "product integration through each band's response: " + std::to_string(nodes) +
                                         " nodes in all (Gauss-Legendre in ln wavelength)"},
                {"systematic_error", request.photometry->input.systematic_fraction}};
  return response_document(request, unit, fit, derived, std::move(statistics), std::move(input), std::move(bands));
}

}  // namespace planckton::api
