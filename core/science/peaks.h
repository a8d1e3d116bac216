// Where a black-body curve peaks, in each of the conventions in use.
//
// Method. As a function of its own spectral variable, every convention of Planck's law is
// proportional to x^n / (exp(x) - 1) with x = h nu / (k T) (n = 3 per unit frequency, 5 per unit
// wavelength, 4 for nu B_nu = lambda B_lambda and for photons per unit wavelength, 2 for photons per
// unit frequency). Setting the derivative to zero gives n (1 - exp(-x)) = x, whose positive root
// is found here by Newton's method (the root is also expressible with the Lambert W function,
// x = n + W(-n e^-n); see e.g. R. Das, Eur. J. Phys. 2015 for the Wien law, but a root find is
// shorter and serves any real n, which the modified black body needs for n = 3 + beta).
//
// The roots are the Wien displacement constants in reduced form: x ~ 2.8214 for B_nu (b' = x k/h
// = 5.879e10 Hz/K) and x ~ 4.9651 for B_lambda (b = h c / (x k) = 2.8978e-3 m K).
//
// Example:
//   double x = planckton::peak_reduced_frequency(3.0);     // 2.82143937...
//   double nu_max = x * planckton::constants::kBoltzmann * 5772.0 / planckton::constants::kPlanck;
#pragma once

#include <span>
#include <string_view>

namespace planckton {

// Positive root of n (1 - exp(-x)) = x for n > 1. Throws std::domain_error for n <= 1, where the
// curve has no interior maximum.
double peak_reduced_frequency(double n);

// The peak conventions planckton reports.
struct PeakConvention {
  std::string_view id;           // key in the response, e.g. "frequency"
  std::string_view description;  // what curve it is the maximum of
  double exponent;               // n in x^n / (e^x - 1)
  bool reported_as_wavelength;   // the maximum of a per-wavelength curve is a wavelength
};

std::span<const PeakConvention> peak_conventions();

// Peak frequency (Hz) or wavelength (m) of the given convention at temperature T.
double peak_frequency(double n, double temperature_k);
double peak_wavelength(double n, double temperature_k);

// Wien displacement constants from the roots: b = h c / (x_5 k) in m K, b' = x_3 k / h in Hz / K.
double wien_wavelength_constant();
double wien_frequency_constant();

}  // namespace planckton
