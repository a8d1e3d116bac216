#include "api/catalogue.h"

#include "science/extinction.h"
#include "science/model.h"

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

namespace {

using json = nlohmann::ordered_json;

json parameters_json(const ModelSpec& spec) {
  json list = json::array();
  for (const ParameterInfo& p : model_parameters(spec)) {
    list.push_back({{"name", p.name},
                    {"unit", p.unit.empty() ? "sr for flux densities, 1 for intensities, relative for relative spectra" : p.unit},
                    {"meaning", p.meaning},
                    {"fitted_as", p.logarithmic ? "ln " + p.name : p.name},
                    {"default_bounds", {std::isfinite(p.lower) ? json(p.lower) : json(nullptr),
                                        std::isfinite(p.upper) ? json(p.upper) : json(nullptr)}}});
  }
  return list;
}

json model_entry(const char* kind, const char* description, const json& variants, const json& members) {
  return {{"kind", kind}, {"description", description}, {"variants", variants}, {"members", members},
          {"data", {"spectrum", "photometry"}}};
}

json variant(const char* when, const ModelSpec& spec) { return {{"when", when}, {"parameters", parameters_json(spec)}}; }

json extinction_laws_json() {
  json list = json::array();
  for (const ExtinctionLawInfo& law : extinction_laws()) {
    list.push_back({{"law", law.id},
                    {"citation", law.citation},
                    {"description", law.description},
                    {"range_um", extinction_range_um(law)},
                    {"default_r_v", law.default_r_v}});
  }
  return list;
}

}  // namespace

nlohmann::ordered_json models_document() {
  const PlanckFitOptions defaults;
  ModelSpec planck, diluted, diluted_known, thin, general, two;
  diluted.kind = diluted_known.kind = ModelKind::kDilutedPlanck;
  diluted_known.angular_radius = AngularRadius{1.0, 0.0};
  thin.kind = general.kind = ModelKind::kModifiedBlackBody;
  general.opacity = DustOpacity::kGeneral;
  two.kind = ModelKind::kTwoTemperature;
  json models = json::array({
      model_entry("planck",
                  "scale * B(T): a black body in the convention of the data (per unit frequency, wavelength, "
                  "wavenumber or photon energy; energy or photons)",
                  json::array({variant("always", planck)}), json::array()),
      model_entry("diluted_planck",
                  "pi theta^2 zeta^2 B(T): a photosphere radiating below the black body of its colour temperature "
                  "by the dilution factor zeta (expanding-photosphere method)",
                  json::array({variant("angular_radius or radius (with options.distance) given", diluted_known),
                               variant("no angular radius: only theta zeta is constrained", diluted)}),
                  json::array({"angular_radius {value, unit (rad, deg, arcsec, mas, uas), error}",
                               "radius {value, unit (a length), error}, with options.distance"})),
      model_entry("modified_black_body",
                  "dust: Omega (nu / nu_0)^beta B_nu(T) (opacity thin) or Omega (1 - exp(-(nu / nu_t)^beta)) B_nu(T) "
                  "(opacity general, nu_t where the optical depth is one)",
                  json::array({variant("opacity thin (default)", thin), variant("opacity general", general)}),
                  json::array({"opacity: thin | general", "reference_frequency {value, unit}: nu_0 of the thin form, "
                               "default 1 THz (300 um)",
                               "dust_opacity {value, unit (m2/kg, cm2/g), at {value, unit}}: with options.distance, the "
                               "dust mass"})),
      model_entry("two_temperature",
                  "scale_1 B(T_1) + scale_2 B(T_2), T_1 < T_2: two black bodies (a binary, a disc with a hot spot, "
                  "two dust components)",
                  json::array({variant("always", two)}), json::array()),
  });
  json modifiers = {
      {"extinction",
       {{"member", "extinction {law, r_v, frame: observed | rest}"},
        {"adds_parameter", "color_excess (E(B-V), mag; default bounds [0, 10])"},
        {"laws", extinction_laws_json()},
        {"note", "outside a law's range the request is refused (422), never extrapolated"}}},
      {"redshift",
       {{"member", "redshift (fixed z >= 0)"},
        {"meaning", "the model is evaluated in the rest frame: temperatures, beta and turnover_frequency are rest-frame "
                    "values; the response gives both frames"}}}};
  json control = {
      {"member", "parameters {<name>: {fixed} | {bounds, prior {mean, sigma}, initial}}"},
      {"units", "those of each parameter above"},
      {"prior", "Gaussian: ((value - mean) / sigma)^2 is added to the minimised sum and reported apart from chi-square"}};
  json options = json::array({
      {{"name", "temperature_bounds"}, {"unit", "K"}, {"default", {defaults.min_temperature_k, defaults.max_temperature_k}},
       {"applies_to", "every temperature without its own bounds"}},
      {{"name", "loss"}, {"kinds", {"none", "huber", "cauchy"}}, {"default", "none"},
       {"scale_default", defaults.loss_scale}, {"scale_unit", "sigma"}, {"applies_to", "spectrum"}},
      {{"name", "distance"}, {"units", documented_length_units()}, {"default", nullptr},
       {"meaning", "luminosity distance when a redshift is given"}},
      {{"name", "max_iterations"}, {"default", defaults.max_iterations}},
      {{"name", "time_budget_seconds"}, {"unit", "s"}, {"default", defaults.time_budget_seconds}},
      {{"name", "systematic_error"}, {"unit", "fraction of the flux"}, {"default", 0.0}, {"applies_to", "photometry"}},
  });
  return {{"models", std::move(models)},
          {"modifiers", std::move(modifiers)},
          {"parameter_control", std::move(control)},
          {"options", std::move(options)},
          {"method", "a coarse start search (over ln T, and pairs of temperatures for two components), then "
                     "Levenberg-Marquardt in Ceres Solver; covariance intervals"}};
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

nlohmann::ordered_json extinction_range_um(const ExtinctionLawInfo& law) {
  return {as_written(law.min_wavelength_m, kMicrometresPerMetre), as_written(law.max_wavelength_m, kMicrometresPerMetre)};
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
