#include "api/catalogue.h"

#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "api/problem.h"
#include "science/planck_fit.h"
#include "science/units.h"

namespace planckton::api {

namespace {

constexpr double kNanometresPerMetre = 1e9;
constexpr double kMicrometresPerMetre = 1e6;

// A wavelength read from a curve file, in the unit of this edge, rounded to 15 significant digits
// so that the value reads as written in the file (1.062, not 1.0620000000000001).
double as_written(double metres, double per_metre) {
  char text[32];
  std::snprintf(text, sizeof text, "%.15g", metres * per_metre);
  return std::strtod(text, nullptr);
}

// An id from a request path, safe to quote in a problem document: anything but printable ASCII
// becomes \xHH (a JSON dump refuses invalid UTF-8).
std::string quoted_id(std::string_view id) {
  std::string out;
  for (const unsigned char c : id) {
    if (c >= 0x20 && c < 0x7f) {
      out += static_cast<char>(c);
    } else {
      char escaped[16];
      std::snprintf(escaped, sizeof escaped, "\\x%02X", static_cast<unsigned>(c));
      out += escaped;
    }
  }
  return "'" + out + "'";
}

nlohmann::ordered_json passband_entry(const Passband& band) {
  using json = nlohmann::ordered_json;
  const auto [lo, hi] = response_support(band);
  json zero_point = nullptr;
  if (band.vega_zero_point) {
    zero_point = {{"value", band.vega_zero_point->flux_density_jy}, {"unit", "Jy"},
                  {"source", band.vega_zero_point->source}};
  }
  json reference = nullptr;
  if (band.reference_wavelength_m) reference = as_written(*band.reference_wavelength_m, kNanometresPerMetre);
  return {{"id", band.id},
          {"source", band.source},
          {"published_at", band.published_at},
          {"description", band.description},
          {"detector", detector_name(band.detector)},
          {"wavelength_range_nm", {as_written(lo, kNanometresPerMetre), as_written(hi, kNanometresPerMetre)}},
          {"pivot_wavelength_nm", pivot_wavelength(band) * kNanometresPerMetre},
          {"effective_width_nm", effective_width(band) * kNanometresPerMetre},
          {"reference_wavelength_nm", reference},
          {"quoted", quoted_flux_json(band.quoted)},
          {"vega_zero_point", zero_point},
          {"samples", band.wavelength_m.size()}};
}

}  // namespace

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
            {"scale_default", defaults.loss_scale}, {"scale_unit", "sigma"}, {"applies_to", "spectrum"}},
           {{"name", "distance"}, {"units", documented_length_units()}, {"default", nullptr}},
           {{"name", "max_iterations"}, {"default", defaults.max_iterations}},
           {{"name", "time_budget_seconds"}, {"unit", "s"}, {"default", defaults.time_budget_seconds}},
           {{"name", "systematic_error"}, {"unit", "fraction of the flux"}, {"default", 0.0}, {"applies_to", "photometry"}},
       })},
      {"data", {"spectrum", "photometry"}},
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
          {"magnitudes", {"ABmag", "Vegamag"}},
          {"syntax", "slash style (erg/s/cm2/Angstrom) or IVOA VOUnit (erg.s**-1.cm**-2.Angstrom**-1); powers as "
                     "m2, m-2, m^2 or m**2; any SI prefix (u for micro)"}};
}

nlohmann::ordered_json health_document() { return {{"status", "ok"}, {"version", PLANCKTON_VERSION}}; }

nlohmann::ordered_json quoted_flux_json(const QuotedFlux& quoted) {
  using json = nlohmann::ordered_json;
  if (quoted.kind == QuotedFlux::Kind::kBandAverage) return {{"kind", "band_average"}, {"source", quoted.source}};
  const json reference = quoted.reference == QuotedFlux::Reference::kPowerLaw
                             ? json{{"kind", "power_law"}, {"power_law_index", quoted.power_law_index}}
                             : json{{"kind", "black_body"}, {"temperature", quoted.reference_temperature_k}};
  return {{"kind", "monochromatic"},
          {"reference_wavelength_nm", as_written(quoted.reference_wavelength_m, kNanometresPerMetre)},
          {"reference", reference},
          {"source", quoted.source}};
}

nlohmann::ordered_json passbands_document() {
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const Passband& band : builtin_passbands()) list.push_back(passband_entry(band));
  const std::size_t count = list.size();
  return {{"passbands", std::move(list)},
          {"count", count},
          {"notes", "detector kinds are as the curve files give them (photon-counting detectors weigh the "
                    "spectrum by photons, bolometers by energy); pivot wavelength, effective width and range are "
                    "computed from the curves; zero points and flux conventions whose source says \"from memory\" "
                    "are remembered from the missions' documentation, not read from a file: check them before "
                    "relying on them at the per-cent level"}};
}

nlohmann::ordered_json passband_document(std::string_view id) {
  const Passband* band = find_builtin_passband(id);
  if (band == nullptr) {
    std::vector<std::string> known;
    for (const Passband& b : builtin_passbands()) known.push_back(b.id);
    std::string list;
    for (const std::string& k : known) list += (list.empty() ? "" : ", ") + k;
    Problem problem = not_found("no built-in passband " + quoted_id(id) + " (ids are lower case); the known ids are: " + list);
    problem.accepted = std::move(known);
    throw ProblemError(std::move(problem));
  }
  nlohmann::ordered_json doc = passband_entry(*band);
  doc["notes"] = band->notes;
  std::vector<double> wavelength_um;
  wavelength_um.reserve(band->wavelength_m.size());
  for (const double w : band->wavelength_m) wavelength_um.push_back(as_written(w, kMicrometresPerMetre));
  doc["curve"] = {{"wavelength_unit", "um"}, {"wavelength", wavelength_um}, {"response", band->response}};
  return doc;
}

}  // namespace planckton::api
