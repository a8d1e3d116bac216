// Quantities derived from a Planck fit: peaks in every convention, bolometric flux, angular radius,
// and, given a distance, radius and luminosity; each with intervals.
//
// Method. Every derived quantity is a monomial Q = c T^a scale^b d^g (d the distance), so
// ln Q = ln c + a ln T + b ln scale + g ln d is linear in the fitted log parameters and its
// variance follows exactly from their covariance: var ln Q = a^2 C_TT + 2ab C_TS + b^2 C_SS +
// g^2 (sigma_d / d)^2. The intervals are the Gaussian ones in ln Q (hence positive and consistent
// under the monomial maps, e.g. the wavelength peak's interval is the image of the temperature's),
// and the reported error is Q sigma_lnQ, the linearised standard error.
//
//   peak frequency      nu_max     = x_n k T / h                 (peaks.h)
//   peak wavelength     lambda_max = h c / (x_n k T)
//   bolometric flux     F          = scale sigma T^4 / pi        flux input; scale = Omega
//   bolometric radiance L          = scale sigma T^4 / pi        intensity input; scale = emissivity
//   angular radius      theta      = sqrt(Omega / pi)            uniform disc
//   radius              R          = theta d
//   luminosity          L          = 4 pi d^2 F                  isotropic emitter
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "science/planck_fit.h"

namespace planckton {

// A value with its linearised error and Gaussian-in-logarithm intervals (1 and 2 sigma, i.e.
// 68.27 % and 95.45 %). error and the intervals are absent when the covariance is unavailable.
enum class OneSided { kNo, kLowerLimit, kUpperLimit };

struct Estimate {
  double value = 0.0;
  std::optional<double> error;
  std::optional<std::array<double, 2>> interval_68;
  std::optional<std::array<double, 2>> interval_95;
  // Profile and posterior intervals (profile_likelihood.h, ensemble_sampler.h): a one-sided limit
  // has NaN at its open end; a posterior has its median.
  OneSided one_sided = OneSided::kNo;
  std::optional<double> median;
};

struct Distance {
  double metres = 0.0;
  double relative_error = 0.0;  // sigma_d / d; 0 when exact
};

struct PeakEstimate {
  std::string id;
  std::string description;
  bool reported_as_wavelength = false;
  double reduced_frequency = 0.0;  // x at the maximum
  Estimate frequency_hz;
  Estimate wavelength_m;           // c / nu of the same maximum
};

struct DerivedQuantities {
  Estimate temperature_k;
  Estimate scale;
  std::vector<PeakEstimate> peaks;
  std::optional<Estimate> bolometric_flux_w_m2;        // flux input
  std::optional<Estimate> bolometric_radiance_w_m2_sr; // intensity input
  std::optional<Estimate> angular_radius_rad;          // flux input
  std::optional<Estimate> radius_m;                    // flux input with a distance
  std::optional<Estimate> luminosity_w;                // flux input with a distance
};

// Throws InputError (field "options.distance") for a non-positive distance.
DerivedQuantities derive_quantities(const PlanckFitResult& fit, const FluxDensityUnit& y_unit,
                                    const std::optional<Distance>& distance);

}  // namespace planckton
