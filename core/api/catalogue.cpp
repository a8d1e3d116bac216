#include "api/catalogue.h"

#include "science/planck_fit.h"
#include "science/units.h"

namespace planckton::api {

nlohmann::ordered_json models_document() {
  const PlanckFitOptions defaults;
  using json = nlohmann::ordered_json;
  json planck = {
      {"kind", "planck"},
      {"description", "scale * B(T): a black body in the convention of the data (per unit frequency, "
                      "wavelength, wavenumber or photon energy; energy or photons)"},
      {"parameters",
       json::array({
           {{"name", "temperature"}, {"unit", "K"}, {"fitted_as", "ln temperature"},
            {"default_bounds", {defaults.min_temperature_k, defaults.max_temperature_k}}},
           {{"name", "scale"}, {"unit", "sr for flux densities, 1 for intensities, relative for relative spectra"},
            {"fitted_as", "ln scale"},
            {"meaning", "solid angle subtended by the source; emissivity; or an arbitrary normalisation"}},
       })},
      {"options",
       json::array({
           {{"name", "temperature_bounds"}, {"unit", "K"}, {"default", {defaults.min_temperature_k, defaults.max_temperature_k}}},
           {{"name", "loss"}, {"kinds", {"none", "huber", "cauchy"}}, {"default", "none"},
            {"scale_default", defaults.loss_scale}, {"scale_unit", "sigma"}},
           {{"name", "distance"}, {"units", documented_length_units()}, {"default", nullptr}},
           {{"name", "max_iterations"}, {"default", defaults.max_iterations}},
           {{"name", "time_budget_seconds"}, {"unit", "s"}, {"default", defaults.time_budget_seconds}},
       })},
      {"method", "grid start over ln T, then Levenberg-Marquardt in Ceres Solver; covariance intervals"},
  };
  return {{"models", json::array({planck})}};
}

nlohmann::ordered_json units_document() {
  std::vector<std::string> flux, intensity, relative;
  for (const std::string& unit : documented_flux_density_units()) {
    const FluxDensityUnit parsed = parse_flux_density_unit(unit);
    (parsed.relative ? relative : parsed.per_steradian ? intensity : flux).push_back(unit);
  }
  return {{"spectral_axis", documented_spectral_axis_units()},
          {"flux_density", flux},
          {"intensity", intensity},
          {"relative", relative},
          {"distance", documented_length_units()},
          {"syntax", "slash style (erg/s/cm2/Angstrom) or IVOA VOUnit (erg.s**-1.cm**-2.Angstrom**-1); powers as "
                     "m2, m-2, m^2 or m**2; any SI prefix (u for micro)"}};
}

nlohmann::ordered_json health_document() { return {{"status", "ok"}, {"version", PLANCKTON_VERSION}}; }

}  // namespace planckton::api
