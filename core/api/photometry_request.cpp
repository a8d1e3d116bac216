#include "api/photometry_request.h"

#include "api/problem.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton::api::json_reading {

namespace {

std::vector<std::string> builtin_band_ids() {
  std::vector<std::string> ids;
  for (const Passband& band : builtin_passbands()) ids.push_back(band.id);
  return ids;
}

DetectorKind detector_at(const element& value, const std::string& pointer) {
  const std::string kind = string_at(value, pointer);
  if (kind == "photon_counting") return DetectorKind::kPhotonCounting;
  if (kind == "energy_integrating") return DetectorKind::kEnergyIntegrating;
  fail(pointer, "is not a detector kind", {"photon_counting", "energy_integrating"});
}

std::shared_ptr<const Passband> inline_band(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"id", "wavelength", "wavelength_unit", "response", "detector"});
  PassbandInput input;
  input.id = string_at(m.require("id"), m.at("id"));
  input.wavelength = numbers_at(m.require("wavelength"), m.at("wavelength"));
  input.wavelength_unit = string_at(m.require("wavelength_unit"), m.at("wavelength_unit"));
  input.response = numbers_at(m.require("response"), m.at("response"));
  input.detector = detector_at(m.require("detector"), m.at("detector"));
  try {
    return std::make_shared<const Passband>(make_passband(input, "band"));
  } catch (const InputError& e) {
    // e.field() is "band.wavelength", "band.response" or "x_unit" (the wavelength unit).
    const std::string member = e.field() == "x_unit" ? "wavelength_unit" : e.field().substr(e.field().find('.') + 1);
    std::string where = member_pointer(pointer, member);
    if (e.index() && member != "wavelength_unit") where = index_pointer(where, *e.index());
    fail(where, e.what(), e.field() == "x_unit" ? documented_spectral_axis_units() : std::vector<std::string>{});
  }
}

QuotedFlux quoted_at(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"kind", "wavelength", "wavelength_unit", "reference"});
  QuotedFlux quoted;
  const std::string kind = string_at(m.require("kind"), m.at("kind"));
  quoted.source = "given with the measurement";
  if (kind == "band_average") {
    for (const char* member : {"wavelength", "wavelength_unit", "reference"}) {
      if (m.find(member)) fail(m.at(member), "applies to monochromatic quotes only");
    }
    return quoted;
  }
  if (kind != "monochromatic") fail(m.at("kind"), "is not a quoted-flux convention", {"band_average", "monochromatic"});
  quoted.kind = QuotedFlux::Kind::kMonochromatic;
  const double wavelength = number_at(m.require("wavelength"), m.at("wavelength"));
  const std::string unit = string_at(m.require("wavelength_unit"), m.at("wavelength_unit"));
  if (!(wavelength > 0.0)) fail(m.at("wavelength"), "must be positive");
  try {
    quoted.reference_wavelength_m = constants::kSpeedOfLight / to_frequency(parse_spectral_axis_unit(unit), wavelength);
  } catch (const InputError& e) {
    fail(m.at("wavelength_unit"), e.what(), documented_spectral_axis_units());
  }
  const std::string ref_pointer = m.at("reference");
  const Members r(m.require("reference"), ref_pointer, {"kind", "power_law_index", "temperature"});
  const std::string reference = string_at(r.require("kind"), r.at("kind"));
  if (reference == "power_law") {
    quoted.reference = QuotedFlux::Reference::kPowerLaw;
    quoted.power_law_index = number_at(r.require("power_law_index"), r.at("power_law_index"));
  } else if (reference == "black_body") {
    quoted.reference = QuotedFlux::Reference::kBlackBody;
    quoted.reference_temperature_k = number_at(r.require("temperature"), r.at("temperature"));
    if (!(quoted.reference_temperature_k > 0.0)) fail(r.at("temperature"), "must be positive (K)");
  } else {
    fail(r.at("kind"), "is not a reference spectrum", {"power_law", "black_body"});
  }
  return quoted;
}

// A bare number is in Jy; an object gives its unit (a flux density per unit frequency).
double zero_point_jy(const element& value, const std::string& pointer) {
  if (value.is_number()) return number_at(value, pointer);
  const Members m(value, pointer, {"value", "unit"});
  const double zero_point = number_at(m.require("value"), m.at("value"));
  const std::string unit = string_at(m.require("unit"), m.at("unit"));
  FluxDensityUnit parsed;
  try {
    parsed = parse_flux_density_unit(unit);
  } catch (const InputError& e) {
    fail(m.at("unit"), e.what(), {"Jy", "mJy", "W/m2/Hz", "erg/s/cm2/Hz"});
  }
  if (parsed.convention != Convention::kEnergyPerFrequency || parsed.per_steradian || parsed.relative) {
    fail(m.at("unit"), "a zero point is a flux density per unit frequency", {"Jy", "mJy", "W/m2/Hz", "erg/s/cm2/Hz"});
  }
  return zero_point * parsed.to_si / 1e-26;
}

}  // namespace

PhotometryRequest parse_photometry(const element& value) {
  simdjson::dom::array list;
  if (value.get_array().get(list)) fail("/photometry", std::string("must be an array of band measurements, is ") + type_name(value));
  PhotometryRequest request;
  std::size_t index = 0;
  for (const element item : list) {
    const std::string pointer = index_pointer("/photometry", index++);
    const Members m(item, pointer, {"band", "value", "error", "unit", "upper_limit", "zero_point", "quoted", "systematic_error"});
    BandMeasurementInput measurement;
    const element band = m.require("band");
    if (band.is_string()) {
      const std::string id = string_at(band, m.at("band"));
      measurement.band = find_builtin_passband(id);
      if (measurement.band == nullptr) {
        fail(m.at("band"), "'" + id + "' is not a shipped band (GET /v1/passbands lists them), nor a curve object",
             builtin_band_ids());
      }
    } else {
      request.inline_bands.push_back(inline_band(band, m.at("band")));
      measurement.band = request.inline_bands.back().get();
    }
    measurement.value = number_at(m.require("value"), m.at("value"));
    measurement.unit = string_at(m.require("unit"), m.at("unit"));
    if (const auto e = m.find("error")) measurement.error = number_at(*e, m.at("error"));
    if (const auto e = m.find("upper_limit")) {
      if (e->get_bool().get(measurement.upper_limit)) fail(m.at("upper_limit"), "must be true or false");
    }
    if (const auto e = m.find("zero_point")) measurement.zero_point_jy = zero_point_jy(*e, m.at("zero_point"));
    if (const auto e = m.find("quoted")) measurement.quoted = quoted_at(*e, m.at("quoted"));
    if (const auto e = m.find("systematic_error")) measurement.systematic_fraction = number_at(*e, m.at("systematic_error"));
    request.input.measurements.push_back(measurement);
  }
  return request;
}

}  // namespace planckton::api::json_reading
