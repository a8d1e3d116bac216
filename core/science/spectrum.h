// A measured spectrum: what the caller sent, and the same data prepared for fitting in SI units.
//
// prepare_spectrum() validates the caller's arrays (same lengths, finite values, positive spectral
// coordinates and errors), converts the spectral axis to frequency and the values to the SI unit
// of their convention, and drops the points inside the `exclude` ranges (given in the axis' own
// unit, e.g. to mask emission lines or telluric bands). Bad input throws InputError naming the
// field and the index of the first offending point.
#pragma once

#include <array>
#include <optional>
#include <cstddef>
#include <string>
#include <vector>

#include "science/units.h"

namespace planckton {

struct SpectrumInput {
  std::vector<double> x;
  std::string x_unit;
  std::vector<double> y;
  std::string y_unit;
  std::vector<double> y_error;               // empty: not given
  std::vector<std::array<double, 2>> exclude;  // [lo, hi] in x_unit
};

struct MeasuredSpectrum {
  SpectralAxisUnit x_unit;
  FluxDensityUnit y_unit;
  std::vector<double> frequency_hz;  // of the points kept
  std::vector<double> value_si;      // in y_unit's convention, SI
  std::vector<double> error_si;      // empty when no errors were given
  std::size_t points_given = 0;
  std::size_t points_excluded = 0;
  double min_frequency_hz = 0.0;
  double max_frequency_hz = 0.0;

  bool has_errors() const { return !error_si.empty(); }
  std::size_t size() const { return frequency_hz.size(); }
};

MeasuredSpectrum prepare_spectrum(const SpectrumInput& input);

// The same spectrum as energy per unit wavelength, sorted by wavelength: what colorimetry and
// radiance temperatures work on. Per-frequency densities are converted (P_lambda = P_nu nu^2 / c,
// from |d nu / d lambda| = c / lambda^2); photon counts and other conventions throw InputError
// (field "y_unit").
struct WavelengthSpectrum {
  std::vector<double> wavelength_m;        // increasing
  std::vector<double> power;               // SI, per metre of wavelength
  std::vector<std::size_t> source_index;   // each point's index in the MeasuredSpectrum
};
WavelengthSpectrum energy_per_wavelength(const MeasuredSpectrum& spectrum);

// Linear interpolation inside the spectrum's range; nullopt outside it.
std::optional<double> interpolate_power(const WavelengthSpectrum& spectrum, double wavelength_m);

}  // namespace planckton
