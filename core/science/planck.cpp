#include "science/planck.h"

#include <cmath>

#include "science/constants.h"

namespace planckton {

namespace {

using constants::kPlanck;
using constants::kSpeedOfLight;

// Beyond this x, exp(x) is within a few powers of ten of overflowing a double (log(DBL_MAX) ~
// 709.78); the radiance is then computed in log space.
constexpr double kWienLogSpaceThreshold = 700.0;

double square(double v) { return v * v; }

}  // namespace

std::string_view convention_name(Convention convention) {
  switch (convention) {
    case Convention::kEnergyPerFrequency: return "energy per unit frequency";
    case Convention::kEnergyPerWavelength: return "energy per unit wavelength";
    case Convention::kEnergyPerWavenumber: return "energy per unit wavenumber";
    case Convention::kEnergyPerPhotonEnergy: return "energy per unit photon energy";
    case Convention::kPhotonsPerFrequency: return "photons per unit frequency";
    case Convention::kPhotonsPerWavelength: return "photons per unit wavelength";
    case Convention::kPhotonsPerWavenumber: return "photons per unit wavenumber";
    case Convention::kPhotonsPerPhotonEnergy: return "photons per unit photon energy";
  }
  return "unknown";
}

double peak_exponent(Convention convention) {
  switch (convention) {
    case Convention::kEnergyPerFrequency:
    case Convention::kEnergyPerWavenumber:
    case Convention::kEnergyPerPhotonEnergy: return 3.0;
    case Convention::kEnergyPerWavelength: return 5.0;
    case Convention::kPhotonsPerFrequency:
    case Convention::kPhotonsPerWavenumber:
    case Convention::kPhotonsPerPhotonEnergy: return 2.0;
    case Convention::kPhotonsPerWavelength: return 4.0;
  }
  return 3.0;
}

double reduced_frequency(double frequency_hz, double temperature_k) {
  return constants::kPlanckOverBoltzmann * frequency_hz / temperature_k;
}

double bose_einstein_occupation(double x) { return 1.0 / std::expm1(x); }

// Each prefactor follows from B_nu = 2 h nu^3 / c^2 / (e^x - 1) by the change of variable
// (|d nu / d lambda| = c / lambda^2 = nu^2 / c, d nu / d sigma = c, d nu / d E = 1 / h) and, for
// photon counts, division by the photon energy h nu.
double planck_prefactor(Convention convention, double nu) {
  const double c = kSpeedOfLight;
  switch (convention) {
    case Convention::kEnergyPerFrequency: return 2.0 * kPlanck * nu * square(nu / c);
    case Convention::kEnergyPerWavelength: return 2.0 * kPlanck * nu * square(nu / c) * square(nu) / c;
    case Convention::kEnergyPerWavenumber: return 2.0 * kPlanck * nu * square(nu) / c;
    case Convention::kEnergyPerPhotonEnergy: return 2.0 * nu * square(nu / c);
    case Convention::kPhotonsPerFrequency: return 2.0 * square(nu / c);
    case Convention::kPhotonsPerWavelength: return 2.0 * square(nu / c) * square(nu) / c;
    case Convention::kPhotonsPerWavenumber: return 2.0 * square(nu) / c;
    case Convention::kPhotonsPerPhotonEnergy: return 2.0 * square(nu / c) / kPlanck;
  }
  return 0.0;
}

double planck_from_prefactor(double prefactor, double x) {
  if (x < kWienLogSpaceThreshold) return prefactor * bose_einstein_occupation(x);
  // Wien limit: 1 / (e^x - 1) = e^-x / (1 - e^-x) and 1 - e^-x == 1 in double here.
  return std::exp(std::log(prefactor) - x);
}

double planck_log_temperature_slope(double x) { return x / -std::expm1(-x); }

double planck_radiance(Convention convention, double frequency_hz, double temperature_k) {
  return planck_from_prefactor(planck_prefactor(convention, frequency_hz), reduced_frequency(frequency_hz, temperature_k));
}

double planck_radiance_temperature_derivative(Convention convention, double frequency_hz,
                                              double temperature_k) {
  const double x = reduced_frequency(frequency_hz, temperature_k);
  return planck_radiance(convention, frequency_hz, temperature_k) * planck_log_temperature_slope(x) / temperature_k;
}

double planck_per_frequency(double frequency_hz, double temperature_k) {
  return planck_radiance(Convention::kEnergyPerFrequency, frequency_hz, temperature_k);
}

double planck_per_wavelength(double wavelength_m, double temperature_k) {
  return planck_radiance(Convention::kEnergyPerWavelength, kSpeedOfLight / wavelength_m,
                         temperature_k);
}

double planck_per_wavenumber(double wavenumber_per_m, double temperature_k) {
  return planck_radiance(Convention::kEnergyPerWavenumber, kSpeedOfLight * wavenumber_per_m,
                         temperature_k);
}

double planck_per_photon_energy(double photon_energy_j, double temperature_k) {
  return planck_radiance(Convention::kEnergyPerPhotonEnergy, photon_energy_j / kPlanck,
                         temperature_k);
}

double photon_radiance_per_frequency(double frequency_hz, double temperature_k) {
  return planck_radiance(Convention::kPhotonsPerFrequency, frequency_hz, temperature_k);
}

double photon_radiance_per_wavelength(double wavelength_m, double temperature_k) {
  return planck_radiance(Convention::kPhotonsPerWavelength, kSpeedOfLight / wavelength_m,
                         temperature_k);
}

double planck_integrated_radiance(double temperature_k) {
  return constants::kStefanBoltzmann * square(square(temperature_k)) / 3.14159265358979323846;
}

}  // namespace planckton
