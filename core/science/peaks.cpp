#include "science/peaks.h"

#include <array>
#include <cmath>
#include <stdexcept>

#include "science/constants.h"

namespace planckton {

double peak_reduced_frequency(double n) {
  if (!(n > 1.0) || !std::isfinite(n)) {
    throw std::domain_error("x^n / (e^x - 1) has an interior maximum only for n > 1");
  }
  // f(x) = x - n (1 - e^-x) is convex with f(0) = 0 and f'(0) = 1 - n < 0, so Newton's method from
  // x = n (to the right of the root, since f(n) = n e^-n > 0) descends monotonically onto it.
  double x = n;
  for (int iteration = 0; iteration < 100; ++iteration) {
    const double e = std::exp(-x);
    const double f = x - n * (1.0 - e);
    const double step = f / (1.0 - n * e);
    x -= step;
    if (std::abs(step) <= 1e-15 * x) break;
  }
  return x;
}

std::span<const PeakConvention> peak_conventions() {
  static const std::array<PeakConvention, 5> kConventions = {{
      {"frequency", "maximum of B_nu, energy per unit frequency (also per unit wavenumber and photon energy)", 3.0, false},
      {"wavelength", "maximum of B_lambda, energy per unit wavelength", 5.0, true},
      {"log_interval", "maximum of nu B_nu = lambda B_lambda, energy per logarithmic interval", 4.0, true},
      {"photon_frequency", "maximum of the photon radiance per unit frequency", 2.0, false},
      {"photon_wavelength", "maximum of the photon radiance per unit wavelength", 4.0, true},
  }};
  return kConventions;
}

double peak_frequency(double n, double temperature_k) {
  return peak_reduced_frequency(n) * constants::kBoltzmann * temperature_k / constants::kPlanck;
}

double peak_wavelength(double n, double temperature_k) {
  return constants::kSecondRadiation / (peak_reduced_frequency(n) * temperature_k);
}

double wien_wavelength_constant() { return peak_wavelength(5.0, 1.0); }

double wien_frequency_constant() { return peak_frequency(3.0, 1.0); }

}  // namespace planckton
