// Quantities derived from a fit of the model family (model_fit.h): the parameters' estimates, the
// peaks of the fitted curve in every convention (observed and, with a redshift, rest frame), each
// component's temperature, peaks and bolometric flux, and, given a distance, radius, luminosity and
// dust mass; each with intervals.
//
// Method. Every quantity Q is a function of the fitted parameters; its interval is Gaussian in
// ln Q with variance g^T C g, g = d ln Q / d u by central differences (step 1e-2 sigma of each u)
// and C the covariance (the delta method; e.g. Press et al., Numerical Recipes, 3rd ed., 15.6),
// plus (sigma_d / d)^2 times the distance's power. Parameters that are not positive (beta, E(B-V))
// get symmetric Gaussian intervals. Issue-free cases agree with derived_quantities.h exactly.
//
//   peaks                  the intrinsic curve (without extinction). Planck and diluted Planck:
//                          x_n k T / h (peaks.h); optically thin dust: x of (n + beta)(1 - e^-x) = x,
//                          solved (peak_reduced_frequency); general opacity and two temperatures:
//                          the root of d ln F / d ln nu = 0 bracketed on a grid and found by TOMS 748
//                          (Alefeld, Potra & Shi 1995; Boost.Math), the highest maximum when the sum
//                          of two curves has two.
//   bolometric flux        the integral of the intrinsic curve over frequency, observed frame:
//                          S sigma T^4 / pi per Planck component; optically thin dust
//                          S (2 h / c^2) ((1 + z) / nu_0)^beta (k T' / h)^(4 + beta) Gamma(4 + beta)
//                          zeta(4 + beta) with T' = T / (1 + z); general opacity by quadrature.
//   angular radius         sqrt(S / pi) (planck; each component of two_temperature); the given
//                          theta for diluted_planck.
//   radius, luminosity     theta D_A and 4 pi D_L^2 F; the distance given is D_L, and
//                          D_A = D_L / (1 + z)^2 (Hogg 1999).
//   dust mass              M = S d^2 (nu_k / nu_0)^beta / kappa_0, kappa_0 the opacity per mass at
//                          nu_k, nu_0 the reference (thin) or turnover (general) frequency
//                          (Hildebrand 1983, QJRAS 24, 267); z = 0 only.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "science/derived_quantities.h"
#include "science/model_fit.h"
#include "science/units.h"

namespace planckton {

struct DustOpacityInput {
  double kappa_m2_per_kg = 0.0;  // absorption cross-section per mass of dust
  double frequency_hz = 0.0;     // where kappa is given
};

struct ComponentQuantities {
  Estimate temperature_k;         // rest frame
  Estimate bolometric_flux;       // W m^-2 (or W m^-2 sr^-1 for intensities); absent for relative data
  double share = 0.0;             // of the total bolometric flux
  std::optional<Estimate> angular_radius_rad;
  std::vector<PeakEstimate> peaks;  // observed frame
};

struct ModelQuantities {
  std::vector<Estimate> parameters;  // as result.parameters, natural units
  std::vector<PeakEstimate> peaks;   // of the whole intrinsic curve, observed frame
  std::vector<PeakEstimate> rest_frame_peaks;            // z > 0
  std::vector<Estimate> observed_temperatures_k;         // T / (1 + z) of each temperature, z > 0
  std::vector<ComponentQuantities> components;          // two_temperature
  std::optional<Estimate> bolometric_flux_w_m2;          // flux input
  std::optional<Estimate> bolometric_radiance_w_m2_sr;   // intensity input
  std::optional<Estimate> angular_radius_rad;
  std::optional<Estimate> radius_m;
  std::optional<Estimate> luminosity_w;
  std::optional<Estimate> dust_mass_kg;
  std::vector<std::string> notes;  // what was not derived, and why
};

// g^T C g with C the covariance of the free parameters: the variance of a quantity whose gradient by
// the free parameters' internal values is g.
double quadratic_form(const ModelFitResult& fit, const std::vector<double>& g);

// How a derived quantity gets its intervals when they are not the delta method's: given the quantity
// as a function of all internal values, and the extra variance of its logarithm from the distance,
// it replaces the linearised estimate's intervals (profile: the range over the profile points;
// posterior: percentiles over the samples). Parameters are not passed through it.
using IntervalRule = std::function<void(const std::function<double(const std::vector<double>&)>& quantity,
                                        double extra_log_variance, Estimate& estimate)>;

// Throws InputError for a non-positive distance ("options.distance") or opacity
// ("model.dust_opacity").
ModelQuantities derive_model_quantities(const ModelFitResult& fit, const FluxDensityUnit& y_unit,
                                        const std::optional<Distance>& distance,
                                        const std::optional<DustOpacityInput>& dust_opacity,
                                        const IntervalRule& rule = {});

}  // namespace planckton
