// Units of the spectral axis, of spectral flux density and intensity, and of distance.
//
// Method. A unit string is parsed into a product of prefixed symbols with integer powers, and its
// dimension (mass, length, time, photon count, solid angle) decides what it measures; the product of
// the symbols' SI factors converts a value to SI. Two spellings are accepted:
//   - the slash style, where "/" divides by the next factor only:   erg/s/cm2/Angstrom, W/m2/sr/nm
//   - IVOA VOUnit (Derriere et al., IVOA Recommendation "Units in the VO" 1.0, 2014), where "." (or a
//     space) multiplies and "**" raises:                          erg.s**-1.cm**-2.Angstrom**-1
// Powers may also be written m2, m-2, m^2 or m^-2. Prefixes are the SI prefixes (micro as "u").
// "relative" stands for an arbitrary energy flux, so "relative/nm" is a relative spectral power
// distribution per unit wavelength (as lamp and illuminant tables are given) whose scale carries no
// physical meaning.
//
// Example:
//   auto axis = planckton::parse_spectral_axis_unit("nm");
//   double nu = planckton::to_frequency(axis, 500.0);             // 5.996e14 Hz
//   auto flux = planckton::parse_flux_density_unit("erg/s/cm2/Angstrom");
//   double si = 1e-15 * flux.to_si;                               // 1e-8 W m^-2 m^-1
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "science/planck.h"

namespace planckton {

enum class SpectralAxisKind { kWavelength, kFrequency, kWavenumber, kPhotonEnergy };

struct SpectralAxisUnit {
  std::string text;  // as the caller wrote it
  SpectralAxisKind kind = SpectralAxisKind::kWavelength;
  double to_si = 1.0;  // value * to_si is in m, Hz, m^-1 or J
};

struct FluxDensityUnit {
  std::string text;
  Convention convention = Convention::kEnergyPerWavelength;
  bool per_steradian = false;  // an intensity (radiance); the fitted scale is then an emissivity
  bool relative = false;       // arbitrary scale ("relative/nm")
  double to_si = 1.0;          // value * to_si is in the convention's SI unit (per sr if per_steradian)
};

// Both throw InputError (field "x_unit" / "y_unit") naming the unit and listing what is accepted.
SpectralAxisUnit parse_spectral_axis_unit(std::string_view text);
FluxDensityUnit parse_flux_density_unit(std::string_view text);

// A length for distances (pc, kpc, Mpc, au, ly, m, km ...): metres per unit. Throws InputError
// (field "distance.unit").
double parse_length_unit(std::string_view text);

// Spectral coordinate <-> frequency in Hz. Values must be positive and finite.
double to_frequency(const SpectralAxisUnit& unit, double value);
double from_frequency(const SpectralAxisUnit& unit, double frequency_hz);

// The convention of the spectral axis as a density variable, e.g. a wavelength axis goes with
// per-wavelength curves. Used to report peaks in the axis' own terms.
bool axis_is_wavelength_like(const SpectralAxisUnit& unit);

// The spellings planckton documents (DESIGN.md's minimum set), for listings and error messages.
const std::vector<std::string>& documented_spectral_axis_units();
const std::vector<std::string>& documented_flux_density_units();
const std::vector<std::string>& documented_length_units();

}  // namespace planckton
