// Planck's law of black-body radiation, in every spectral convention planckton fits.
//
// Method. The spectral radiance of a black body at temperature T is (M. Planck, Ann. Phys. 4, 553
// (1901); any radiometry handbook, e.g. W. L. Wolfe, "Introduction to Radiometry", SPIE 1998):
//
//   B_nu(T)     = 2 h nu^3 / c^2        / (exp(x) - 1)     W m^-2 sr^-1 Hz^-1
//   B_lambda(T) = 2 h c^2 / lambda^5    / (exp(x) - 1)     W m^-2 sr^-1 m^-1
//   with x = h nu / (k T) = h c / (lambda k T).
//
// Every convention (per unit frequency, wavelength, wavenumber or photon energy; energy or photon
// counts) has the same form: a prefactor that depends only on the spectral coordinate, times the
// Bose-Einstein occupation 1 / (exp(x) - 1). planckton therefore writes each convention as
// prefactor(nu) * occupation(x); the fit computes the prefactors and h nu / k once per point.
//
// Numerics. The occupation uses expm1, so the Rayleigh-Jeans side (x down to 1e-8 and below) keeps
// full precision; on the Wien side, where exp(x) overflows beyond x ~ 709, the radiance is evaluated
// as exp(log(prefactor) - x) so that a value representable as a double is never flushed to zero or
// turned into inf or NaN.
//
// Example:
//   double b = planckton::planck_radiance(planckton::Convention::kEnergyPerWavelength,
//                                         planckton::constants::kSpeedOfLight / 500e-9, 5772.0);
//   // b ~ 2.6e13 W m^-2 sr^-1 m^-1 (the Sun's photospheric temperature near its peak)
#pragma once

#include <string_view>

namespace planckton {

// What a spectral density is counted in (energy or photons) and per unit of what.
enum class Convention {
  kEnergyPerFrequency,     // B_nu,     W m^-2 sr^-1 Hz^-1
  kEnergyPerWavelength,    // B_lambda, W m^-2 sr^-1 m^-1
  kEnergyPerWavenumber,    // B_sigma,  W m^-2 sr^-1 (m^-1)^-1, sigma = 1 / lambda
  kEnergyPerPhotonEnergy,  // B_E,      W m^-2 sr^-1 J^-1,     E = h nu
  kPhotonsPerFrequency,    // N_nu,     s^-1 m^-2 sr^-1 Hz^-1
  kPhotonsPerWavelength,   // N_lambda, s^-1 m^-2 sr^-1 m^-1
  kPhotonsPerWavenumber,   // N_sigma,  s^-1 m^-2 sr^-1 m
  kPhotonsPerPhotonEnergy, // N_E,      s^-1 m^-2 sr^-1 J^-1
};

std::string_view convention_name(Convention convention);

// The exponent n such that, as a function of its own spectral variable, the convention's curve is
// proportional to x^n / (exp(x) - 1). Its maximum solves n (1 - exp(-x)) = x (see peaks.h).
double peak_exponent(Convention convention);

// x = h nu / (k T).
double reduced_frequency(double frequency_hz, double temperature_k);

// 1 / (exp(x) - 1), accurate for small x; 0 only where the value underflows.
double bose_einstein_occupation(double x);

// The prefactor p(nu) with radiance = p(nu) / (exp(x) - 1), in the convention's SI unit.
double planck_prefactor(Convention convention, double frequency_hz);

// prefactor / (e^x - 1), in log space on the Wien side: the radiance from precomputed per-point
// constants (fits compute the prefactor once per point).
double planck_from_prefactor(double prefactor, double x);

// d ln B / d ln T = x / (1 - e^-x), the same in every convention.
double planck_log_temperature_slope(double x);

// Spectral radiance of a black body in the given convention at the given frequency (the spectral
// coordinate of every convention is passed as a frequency: lambda = c / nu, sigma = nu / c,
// E = h nu).
double planck_radiance(Convention convention, double frequency_hz, double temperature_k);

// d radiance / d T, analytic: radiance * (x / T) / (1 - exp(-x)).
double planck_radiance_temperature_derivative(Convention convention, double frequency_hz,
                                              double temperature_k);

// Convenience forms in each convention's own spectral variable, SI units throughout.
double planck_per_frequency(double frequency_hz, double temperature_k);
double planck_per_wavelength(double wavelength_m, double temperature_k);
double planck_per_wavenumber(double wavenumber_per_m, double temperature_k);
double planck_per_photon_energy(double photon_energy_j, double temperature_k);
double photon_radiance_per_frequency(double frequency_hz, double temperature_k);
double photon_radiance_per_wavelength(double wavelength_m, double temperature_k);

// Radiance integrated over all frequencies, sigma T^4 / pi (Stefan-Boltzmann law), W m^-2 sr^-1.
double planck_integrated_radiance(double temperature_k);

}  // namespace planckton
