#include "api/fit_response.h"

#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>

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

nlohmann::ordered_json make_fit_response(const FitRequest& request, const MeasuredSpectrum& spectrum, const PlanckFitResult& fit,
                       const DerivedQuantities& derived) {
  json peaks = json::object();
  for (const PeakEstimate& peak : derived.peaks) peaks[peak.id] = peak_json(peak);
  peaks["of_data"] = data_peak_id(spectrum.y_unit.convention);

  const json warnings = warnings_json(fit.warnings);

  const double correlation = fit.covariance_available ? fit.log_correlation() : 0.0;
  json response = {
      {"model", request.model_kind},
      {"status", fit.converged ? "converged" : "not_converged"},
      {"parameters",
       {{"temperature", estimate_json(derived.temperature_k, "K")}, {"scale", scale_json(derived.scale, spectrum.y_unit)}}},
      {"correlation",
       fit.covariance_available
           ? json{{"parameters", {"temperature", "scale"}},
                  {"matrix", {{1.0, correlation}, {correlation, 1.0}}},
                  {"space", "ln temperature, ln scale (the fitted parameters)"}}
           : json(nullptr)},
      {"peaks", peaks},
      {"derived", derived_json(derived)},
      {"statistics", statistics_json(request, spectrum, fit)},
      {"intervals",
       {{"method", "covariance"},
        {"description", "linearised (Gaussian) errors from the covariance matrix; intervals are Gaussian in "
                        "the logarithm of each positive quantity, at 1 and 2 sigma"},
        {"levels", {{"interval_68", 0.682689492137086}, {"interval_95", 0.954499736103642}}}}},
      {"input",
       {{"x_unit", spectrum.x_unit.text},
        {"y_unit", spectrum.y_unit.text},
        {"convention", std::string(convention_name(spectrum.y_unit.convention)) +
                           (spectrum.y_unit.per_steradian ? ", per steradian" : "")}}},
      {"solver",
       {{"termination", fit.termination},
        {"iterations", fit.iterations},
        {"message", fit.solver_message},
        {"start_temperature", fit.start_temperature_k}}},
      {"warnings", warnings},
      {"provenance", provenance_json()},
  };
  if (!request.id) return response;
  json with_id = {{"id", *request.id}};
  for (auto& [key, value] : response.items()) with_id[key] = std::move(value);
  return with_id;
}

}  // namespace planckton::api
