#include "science/photometry.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <mutex>
#include <optional>

#include "science/constants.h"
#include "science/input_error.h"

namespace planckton {

namespace {

// 2.5 / ln 10: magnitudes per unit of ln flux.
constexpr double kMagnitudesPerLnFlux = 1.0857362047581294;

bool same_quote(const QuotedFlux& a, const QuotedFlux& b) {
  return a.kind == b.kind && a.reference_wavelength_m == b.reference_wavelength_m && a.reference == b.reference &&
         a.power_law_index == b.power_law_index && a.reference_temperature_k == b.reference_temperature_k;
}

// The shipped bands' quadratures in their own conventions are computed once per process (and the
// ones a request brings, once per request).
const BandQuadrature& builtin_quadrature(const Passband& band) {
  static std::mutex mutex;
  static std::map<const Passband*, BandQuadrature> cache;
  const std::lock_guard<std::mutex> lock(mutex);
  auto found = cache.find(&band);
  if (found == cache.end()) found = cache.emplace(&band, make_band_quadrature(band, band.quoted)).first;
  return found->second;
}

bool is_builtin(const Passband* band) { return find_builtin_passband(band->id) == band; }

BandQuadrature quadrature_for(const BandMeasurementInput& m, const QuotedFlux& quoted, std::size_t index) {
  try {
    if (is_builtin(m.band) && same_quote(quoted, m.band->quoted)) return builtin_quadrature(*m.band);
    return make_band_quadrature(*m.band, quoted);
  } catch (const InputError& e) {
    throw InputError("photometry." + e.field(), e.what(), index);
  }
}

void prepare_magnitude(const BandMeasurementInput& m, std::size_t index, BandMeasurement& out) {
  out.scale = m.unit == "ABmag" ? MeasurementScale::kAbMagnitude : MeasurementScale::kVegaMagnitude;
  if (out.scale == MeasurementScale::kAbMagnitude) {
    if (m.zero_point_jy) throw InputError("photometry.zero_point", "applies to Vegamag only (ABmag's is 3631 Jy)", index);
    out.zero_point_si = kAbZeroPointJy * kJansky;
    out.zero_point_source = "Oke & Gunn 1983, ApJ 266, 713: 3631 Jy";
  } else if (m.zero_point_jy) {
    if (!(*m.zero_point_jy > 0.0) || !std::isfinite(*m.zero_point_jy)) {
      throw InputError("photometry.zero_point", "must be a positive flux density", index);
    }
    out.zero_point_si = *m.zero_point_jy * kJansky;
    out.zero_point_source = "given with the measurement";
  } else if (m.band->vega_zero_point) {
    out.zero_point_si = m.band->vega_zero_point->flux_density_jy * kJansky;
    out.zero_point_source = m.band->vega_zero_point->source;
  } else {
    throw InputError("photometry.zero_point",
                     "band " + m.band->id + " has no built-in Vega zero point: give zero_point (the flux density of "
                     "a zero-magnitude source, in Jy), or use ABmag or a flux density unit", index);
  }
  if (m.upper_limit) {
    throw InputError("photometry.upper_limit", "upper limits are taken in flux density units (value = the limit, "
                                               "error = the 1-sigma noise); convert the limiting magnitude", index);
  }
}

// Returns whether the unit is an intensity (per steradian).
bool prepare_flux_density(const BandMeasurementInput& m, std::size_t index, BandMeasurement& out) {
  FluxDensityUnit unit;
  try {
    unit = parse_flux_density_unit(m.unit);
  } catch (const InputError& e) {
    throw InputError("photometry.unit", std::string(e.what()) + "; or ABmag, Vegamag", index);
  }
  if (unit.relative || (unit.convention != Convention::kEnergyPerFrequency &&
                        unit.convention != Convention::kEnergyPerWavelength)) {
    throw InputError("photometry.unit", "band measurements take energy flux densities per frequency or per "
                                        "wavelength (e.g. Jy, mJy, W/m2/Hz, erg/s/cm2/Angstrom, MJy/sr) or "
                                        "magnitudes (ABmag, Vegamag), not " + m.unit, index);
  }
  if (m.zero_point_jy) throw InputError("photometry.zero_point", "applies to Vegamag only", index);
  out.scale = MeasurementScale::kFluxDensity;
  out.unit_to_si = unit.to_si;
  out.per_wavelength = unit.convention == Convention::kEnergyPerWavelength;
  return unit.per_steradian;
}

}  // namespace

double BandMeasurement::from_quoted_f_nu(double f_nu) const {
  switch (scale) {
    case MeasurementScale::kFluxDensity:
      return per_wavelength ? f_nu * constants::kSpeedOfLight / (quadrature.quoted_wavelength_m * quadrature.quoted_wavelength_m)
                            : f_nu;
    default: return -2.5 * std::log10(f_nu / zero_point_si);
  }
}

double BandMeasurement::to_quoted_f_nu(double v) const {
  switch (scale) {
    case MeasurementScale::kFluxDensity:
      return per_wavelength ? v * quadrature.quoted_wavelength_m * quadrature.quoted_wavelength_m / constants::kSpeedOfLight
                            : v;
    default: return zero_point_si * std::pow(10.0, -0.4 * v);
  }
}

MeasuredPhotometry prepare_photometry(const PhotometryInput& input) {
  const double global_floor = input.systematic_fraction;
  if (!(global_floor >= 0.0) || !(global_floor < 1.0)) {
    throw InputError("options.systematic_error", "must be a fraction of the flux in [0, 1)");
  }
  MeasuredPhotometry out;
  std::size_t detections_with_error = 0;
  std::optional<bool> per_steradian;
  for (std::size_t i = 0; i < input.measurements.size(); ++i) {
    const BandMeasurementInput& m = input.measurements[i];
    if (m.band == nullptr) throw InputError("photometry.band", "is required", i);
    BandMeasurement band;
    band.band = m.band;
    band.unit = m.unit;
    band.upper_limit = m.upper_limit;
    band.quoted = m.quoted.value_or(m.band->quoted);
    const bool magnitude = m.unit == "ABmag" || m.unit == "Vegamag";
    bool sr = false;  // magnitudes are of a source's flux density, never per steradian
    if (magnitude) {
      prepare_magnitude(m, i, band);
    } else {
      sr = prepare_flux_density(m, i, band);
    }
    if (per_steradian && *per_steradian != sr) {
      throw InputError("photometry.unit", "mixes intensities (per steradian) with flux densities or magnitudes: the "
                                          "scale would mean a solid angle for some bands and an emissivity for others", i);
    }
    per_steradian = sr;
    if (!std::isfinite(m.value) || (!magnitude && !(m.value > 0.0) && !m.upper_limit)) {
      throw InputError("photometry.value", magnitude ? "must be a finite magnitude" : "must be a positive flux density "
                                                       "(a non-detection is an upper limit)", i);
    }
    if (m.upper_limit && !(m.value > 0.0)) throw InputError("photometry.value", "an upper limit must be positive", i);
    band.value = magnitude ? m.value : m.value * band.unit_to_si;
    const double floor = m.systematic_fraction.value_or(global_floor);
    if (!(floor >= 0.0) || !(floor < 1.0)) {
      throw InputError("photometry.systematic_error", "must be a fraction of the flux in [0, 1)", i);
    }
    if (m.error) {
      if (!(*m.error > 0.0) || !std::isfinite(*m.error)) throw InputError("photometry.error", "must be positive and finite", i);
      const double sigma = magnitude ? *m.error : *m.error * band.unit_to_si;
      const double systematic = m.upper_limit ? 0.0 : (magnitude ? kMagnitudesPerLnFlux * floor : floor * band.value);
      band.error = std::hypot(sigma, systematic);
      if (!m.upper_limit) ++detections_with_error;
    } else if (m.upper_limit) {
      throw InputError("photometry.error", "an upper limit needs its 1-sigma noise as error (value = n x error "
                                           "for an n-sigma limit)", i);
    }
    band.quadrature = quadrature_for(m, band.quoted, i);
    (m.upper_limit ? out.upper_limits : out.detections) += 1;
    out.bands.push_back(std::move(band));
  }
  if (out.bands.size() < 2) {
    throw InputError("photometry", "has " + std::to_string(out.bands.size()) + " band(s), fewer than the 2 free "
                                   "parameters (temperature, scale)");
  }
  if (out.detections == 0) throw InputError("photometry", "has only upper limits; at least one detection is needed");
  const std::size_t detections_without = out.detections - detections_with_error;
  if (detections_without != 0 && detections_with_error != 0) {
    for (std::size_t i = 0; i < out.bands.size(); ++i) {
      if (!input.measurements[i].error) {
        throw InputError("photometry.error", "is missing here while other bands have errors: give every detection "
                                             "an error, or none (then all bands get equal fractional weight)", i);
      }
    }
  }
  out.has_errors = detections_with_error != 0;
  if (!out.has_errors && out.upper_limits != 0) {
    std::size_t first_without = 0;
    while (input.measurements[first_without].upper_limit) ++first_without;
    throw InputError("photometry.error", "upper limits are weighed against the detections' errors: give every "
                                         "detection an error", first_without);
  }
  out.per_steradian = per_steradian.value_or(false);
  out.min_frequency_hz = HUGE_VAL;
  out.max_frequency_hz = 0.0;
  for (const BandMeasurement& b : out.bands) {
    const auto [lo, hi] = std::minmax_element(b.quadrature.frequency_hz.begin(), b.quadrature.frequency_hz.end());
    out.min_frequency_hz = std::min(out.min_frequency_hz, *lo);
    out.max_frequency_hz = std::max(out.max_frequency_hz, *hi);
  }
  return out;
}

}  // namespace planckton
