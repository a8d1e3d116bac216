// planckton-planck-values: a test tool that prints planckton's Planck functions for the reference
// checks in tests/reference (which compare them with astropy). Reads "T nu" pairs (K, Hz) on
// standard input; writes per line, in SI: B_nu, B_lambda(c/nu), B_sigma(nu/c), B_E(h nu),
// photon radiance per frequency, photon radiance per wavelength, dB_nu/dT.
#include <cstdio>

#include "science/constants.h"
#include "science/planck.h"

int main() {
  using namespace planckton;
  double temperature = 0.0, nu = 0.0;
  while (std::scanf("%lf %lf", &temperature, &nu) == 2) {
    const double c = constants::kSpeedOfLight;
    std::printf("%.17g %.17g %.17g %.17g %.17g %.17g %.17g\n", planck_per_frequency(nu, temperature),
                planck_per_wavelength(c / nu, temperature), planck_per_wavenumber(nu / c, temperature),
                planck_per_photon_energy(constants::kPlanck * nu, temperature),
                photon_radiance_per_frequency(nu, temperature), photon_radiance_per_wavelength(c / nu, temperature),
                planck_radiance_temperature_derivative(Convention::kEnergyPerFrequency, nu, temperature));
  }
  return 0;
}
