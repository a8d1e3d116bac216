#include "api/lab_documents.h"

#include <algorithm>
#include <limits>
#include <cmath>

#include "api/fit_response.h"
#include "api/json_reader.h"
#include "api/problem.h"
#include "science/colorimetry.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/radiometry.h"

namespace planckton::api {

namespace {

using json = nlohmann::ordered_json;
using namespace json_reading;

constexpr double kNanometre = 1e-9;
// CIE 015:2018: the visible range over which colorimetry, and the distribution temperature, are taken.
constexpr double kVisibleMin = 380e-9, kVisibleMax = 780e-9;

// A wavelength given in the spectrum's x_unit, in nm; exact for nm input.
double wavelength_nm_of(const SpectralAxisUnit& unit, double value) {
  if (unit.kind == SpectralAxisKind::kWavelength && value > 0.0 && std::isfinite(value)) return value * (unit.to_si / kNanometre);
  return constants::kSpeedOfLight / to_frequency(unit, value) / kNanometre;
}

// The science layer's InputError as a problem with the pointer of the field.
template <typename Work>
auto with_pointers(Work&& work) -> decltype(work()) {
  try {
    return work();
  } catch (const InputError& e) {
    throw problem_for(e);
  }
}

Observer parse_observer(const std::optional<element>& value) {
  if (!value) return Observer::kCie1931TwoDegree;
  const std::string name = string_at(*value, "/observer");
  if (name == "cie1931_2deg") return Observer::kCie1931TwoDegree;
  if (name == "cie1964_10deg") return Observer::kCie1964TenDegree;
  fail("/observer", "is not a known observer", {"cie1931_2deg", "cie1964_10deg"});
}

json chromaticity_json(const Chromaticity& c) {
  return {{"tristimulus", {{"X", c.X}, {"Y", c.Y}, {"Z", c.Z}}},
          {"chromaticity", {{"x", c.x}, {"y", c.y}}},
          {"uv_1960", {{"u", c.u}, {"v", c.v}}},
          {"uv_1976", {{"u_prime", c.u_prime}, {"v_prime", c.v_prime}}}};
}

// The temperature of the Planck curve whose relative distribution best matches the source's over
// 380-780 nm, scale free: the core fit on the visible points only.
PlanckFitResult distribution_temperature(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options) {
  MeasuredSpectrum visible = spectrum;
  visible.frequency_hz.clear();
  visible.value_si.clear();
  visible.error_si.clear();
  for (std::size_t i = 0; i < spectrum.size(); ++i) {
    const double wavelength = constants::kSpeedOfLight / spectrum.frequency_hz[i];
    if (wavelength < kVisibleMin * (1 - 1e-12) || wavelength > kVisibleMax * (1 + 1e-12)) continue;
    visible.frequency_hz.push_back(spectrum.frequency_hz[i]);
    visible.value_si.push_back(spectrum.value_si[i]);
    if (spectrum.has_errors()) visible.error_si.push_back(spectrum.error_si[i]);
  }
  visible.min_frequency_hz = constants::kSpeedOfLight / kVisibleMax;
  visible.max_frequency_hz = constants::kSpeedOfLight / kVisibleMin;
  visible.y_unit.relative = true;
  return fit_planck(visible, options);
}

json cct_json(const CorrelatedColourTemperature& cct) {
  json doc = {{"value", cct.cct_k ? json(*cct.cct_k) : json(nullptr)}, {"unit", "K"}, {"withheld", !cct.cct_k}};
  if (!cct.cct_k) {
    doc["reason"] = std::abs(cct.duv) > 0.05
                        ? "|Duv| > 0.05: the source is too far from the Planckian locus for a correlated colour "
                          "temperature to mean anything (CIE 015:2018)"
                        : "the nearest point of the Planckian locus lies outside the tabulated range";
  } else {
    doc["reason"] = nullptr;
  }
  doc["nearest_locus_temperature"] = cct.nearest_locus_temperature_k;
  doc["method"] = cct.method;
  return doc;
}

}  // namespace

const std::vector<std::string>& laboratory_cautions() {
  static const std::vector<std::string> kCautions = {
      "These values are computed from the data given; they are not a certified calibration.",
      "Hot sources, furnaces, lamps, ultraviolet and intense light are hazards to eyes and skin: use the "
      "protection your local codes require.",
      "For safety-related temperature measurement follow local codes and accredited calibration practice."};
  return kCautions;
}

nlohmann::ordered_json light_source_text(std::string_view text, const ServiceLimits& limits) {
  const element root = parse_text(text);
  const Members top(root, "", {"id", "spectrum", "observer"});
  FitRequest request;  // the spectrum, and the budget of the distribution-temperature fit
  request.spectrum = parse_spectrum(top.require("spectrum"));
  apply_limits(limits, request);
  if (!request.spectrum.exclude.empty()) {
    fail("/spectrum/exclude", "is not taken here: colorimetry needs the whole visible spectrum, and a masked "
                              "range would be interpolated across");
  }
  const Observer observer = parse_observer(top.find("observer"));
  if (const auto e = top.find("id")) request.id = request_id(*e);
  return with_pointers([&] {
    const MeasuredSpectrum spectrum = prepare_spectrum(request.spectrum);
    const WavelengthSpectrum s = energy_per_wavelength(spectrum);
    // The colorimetry sees the points sorted by wavelength; its problems name them as given.
    const auto colour_of = [&](Observer o) {
      try {
        return chromaticity_of(s.wavelength_m, s.power, o);
      } catch (const InputError& e) {
        if (!e.index() || *e.index() >= s.source_index.size()) throw;
        throw InputError(e.field(), e.what(), s.source_index[*e.index()]);
      }
    };
    const Chromaticity colour = colour_of(observer);
    // CCT and Duv are defined in the CIE 1931 2-degree observer's uv (CIE 015:2018).
    const Chromaticity two_degree = observer == Observer::kCie1931TwoDegree ? colour : colour_of(Observer::kCie1931TwoDegree);
    const CorrelatedColourTemperature cct = correlated_colour_temperature(two_degree.u, two_degree.v);
    const PlanckFitResult fit = distribution_temperature(spectrum, request.fit_options);
    const DerivedQuantities derived = derive_quantities(fit, spectrum.y_unit, std::nullopt);

    std::vector<FitWarning> warnings = fit.warnings;
    if (!cct.within_range) {
      warnings.push_back({"outside_cct_range", "the correlated colour temperature lies outside 1,000-20,000 K, "
                                               "where the method is validated"});
    }
    if (!cct.cct_k) warnings.push_back({"cct_withheld", "the correlated colour temperature is withheld (see cct.reason)"});

    json doc;
    if (request.id) doc["id"] = *request.id;
    doc["observer"] = observer_name(observer);
    doc["range_nm"] = {kVisibleMin / kNanometre, kVisibleMax / kNanometre};
    doc["interpolation"] = "linear to the 5 nm grid of the colour-matching functions (CIE 015:2018)";
    const json colour_members = chromaticity_json(colour);
    for (const auto& [key, value] : colour_members.items()) doc[key] = value;
    doc["cct"] = cct_json(cct);
    doc["duv"] = {{"value", cct.duv}, {"observer", "CIE 1931 2-degree"}, {"space", "CIE 1960 uv"}, {"method", cct.method}};
    json distribution = estimate_json(derived.temperature_k, "K");
    distribution["range_nm"] = {kVisibleMin / kNanometre, kVisibleMax / kNanometre};
    distribution["method"] = "Planck fit of the relative distribution, scale free";
    distribution["status"] = fit.converged ? "converged" : "not_converged";
    doc["distribution_temperature"] = distribution;
    doc["warnings"] = warnings_json(warnings);
    doc["cautions"] = laboratory_cautions();
    doc["provenance"] = provenance_json();
    return doc;
  });
}

nlohmann::ordered_json hot_body_text(std::string_view text, const ServiceLimits& limits) {
  const element root = parse_text(text);
  const Members top(root, "", {"id", "spectrum", "emissivity", "radiance_temperature_at", "ratio_pair", "options"});
  FitRequest request;
  request.spectrum = parse_spectrum(top.require("spectrum"));
  if (const auto e = top.find("options")) parse_fit_options(*e, request);
  apply_limits(limits, request);
  if (const auto e = top.find("id")) request.id = request_id(*e);
  bool linear = false;
  if (const auto e = top.find("emissivity")) {
    const std::string form = string_at(*e, "/emissivity");
    if (form == "linear") linear = true;
    else if (form != "constant") fail("/emissivity", "is not a known emissivity form", {"constant", "linear"});
  }
  std::vector<double> at;
  if (const auto e = top.find("radiance_temperature_at")) at = numbers_at(*e, "/radiance_temperature_at");
  std::optional<std::array<double, 2>> pair;
  if (const auto e = top.find("ratio_pair")) pair = pair_at(*e, "/ratio_pair");

  return with_pointers([&] {
    const MeasuredSpectrum spectrum = prepare_spectrum(request.spectrum);
    if (!spectrum.y_unit.per_steradian || spectrum.y_unit.relative) {
      fail("/spectrum/y_unit", "must be a calibrated radiance per steradian (e.g. W/m2/sr/nm): an emissivity compares "
                               "the measured radiance with a black body's",
           {"W/m2/sr/nm", "W/m2/sr/um", "W/m2/sr/Hz", "MJy/sr", "Jy/sr"});
    }
    const WavelengthSpectrum s = energy_per_wavelength(spectrum);
    GreyBodyFitOptions options{request.fit_options, linear};
    const GreyBodyFitResult grey = fit_grey_body(spectrum, options);
    const DerivedQuantities derived = derive_quantities(grey.planck, spectrum.y_unit, std::nullopt);

    json doc;
    if (request.id) doc["id"] = *request.id;
    doc["model"] = linear ? "grey_body_linear" : "grey_body";
    doc["status"] = grey.planck.converged ? "converged" : "not_converged";
    json parameters;
    parameters["temperature"] = estimate_json(derived.temperature_k, "K");
    // Gaussian intervals of a parameter fitted linearly, cut to [lo, hi] (an emissivity stays in [0, 1]).
    const auto linear_estimate = [](double value, double error, double lo, double hi) {
      const bool known = error > 0.0;
      const auto bounded = [&](double k) {
        return json::array({std::clamp(value - k * error, lo, hi), std::clamp(value + k * error, lo, hi)});
      };
      return json{{"value", value}, {"unit", "1"}, {"error", known ? json(error) : json(nullptr)},
                  {"interval_68", known ? bounded(1.0) : json(nullptr)},
                  {"interval_95", known ? bounded(2.0) : json(nullptr)}};
    };
    parameters["emissivity"] = linear_estimate(grey.emissivity, grey.emissivity_error, 0.0, 1.0);
    if (linear) {
      constexpr double kUnbounded = std::numeric_limits<double>::infinity();
      json slope = linear_estimate(grey.slope_per_m * 1e-6, grey.slope_error * 1e-6, -kUnbounded, kUnbounded);
      slope["unit"] = "1/um";
      parameters["emissivity_slope"] = slope;
    }
    doc["parameters"] = parameters;
    doc["reference_wavelength"] = {{"value", grey.reference_wavelength_m / kNanometre}, {"unit", "nm"}};
    doc["temperature_emissivity_correlation"] = grey.temperature_emissivity_correlation;

    json radiance_temperatures = json::array();
    for (std::size_t i = 0; i < at.size(); ++i) {
      const std::string pointer = "/radiance_temperature_at/" + std::to_string(i);
      if (!(at[i] > 0.0)) fail(pointer, "must be a positive wavelength in x_unit");
      const double wavelength_nm = wavelength_nm_of(spectrum.x_unit, at[i]);
      const auto radiance = interpolate_power(s, wavelength_nm * kNanometre);
      if (!radiance || !(*radiance > 0.0)) fail(pointer, "is outside the measured range, or the radiance there is not positive");
      radiance_temperatures.push_back(
          {{"wavelength", wavelength_nm}, {"value", radiance_temperature(wavelength_nm * kNanometre, *radiance)}});
    }
    doc["radiance_temperatures"] = radiance_temperatures;
    doc["ratio_temperature"] = nullptr;
    if (pair) {
      double wavelengths[2];
      double radiances[2];
      for (int k = 0; k < 2; ++k) {
        if (!((*pair)[k] > 0.0)) fail("/ratio_pair/" + std::to_string(k), "must be a positive wavelength in x_unit");
        wavelengths[k] = wavelength_nm_of(spectrum.x_unit, (*pair)[k]) * kNanometre;
        const auto radiance = interpolate_power(s, wavelengths[k]);
        if (!radiance || !(*radiance > 0.0)) {
          fail("/ratio_pair/" + std::to_string(k), "is outside the measured range, or the radiance there is not positive");
        }
        radiances[k] = *radiance;
      }
      if (wavelengths[0] == wavelengths[1]) fail("/ratio_pair", "needs two different wavelengths");
      const auto t = ratio_temperature(wavelengths[0], radiances[0], wavelengths[1], radiances[1]);
      doc["ratio_temperature"] = {{"value", t ? json(*t) : json(nullptr)}, {"unit", "K"},
                                  {"wavelengths_nm", {wavelengths[0] / kNanometre, wavelengths[1] / kNanometre}},
                                  {"assumes", "equal emissivity at both wavelengths (grey body)"}};
    }
    doc["statistics"] = statistics_json(request, spectrum, grey.planck);
    doc["solver"] = {{"termination", grey.planck.termination}, {"iterations", grey.planck.iterations},
                     {"message", grey.planck.solver_message}};
    doc["warnings"] = warnings_json(grey.warnings);
    doc["cautions"] = laboratory_cautions();
    doc["provenance"] = provenance_json();
    return doc;
  });
}

}  // namespace planckton::api
