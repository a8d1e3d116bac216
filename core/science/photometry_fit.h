// Fitting a Planck curve to band measurements, through each band's response.
//
// Model. The quoted flux of band b is F_b = scale sum_j w_bj B_nu(nu_bj; T) (synthetic_photometry.h),
// with scale the solid angle (sr), or the emissivity for intensities; then converted to the
// measurement's space (flux per frequency or wavelength, or magnitude; photometry.h). The effective-
// wavelength shortcut (B at one wavelength per band) is not used: for broad bands on a steep part of
// the curve it is wrong by more than the errors (tests/unit/photometry_fit_test.cpp).
//
// Method: as for spectra (planck_fit.h): a coarse grid over ln T with the scale in closed form from
// the detections (magnitudes linearised for this start only), golden-section refinement, then
// Levenberg-Marquardt (ceres::TinySolver) over (ln T, ln scale) on all residuals, detections and
// censored upper limits alike, with an analytic Jacobian; a ceres::Problem with ln T bounded when
// the solution leaves the temperature bounds. Covariance (J^T J)^-1 at the solution, multiplied by
// chi^2 / dof when the errors were estimated. chi^2 includes the limits' -2 ln Phi terms.
//
// Example:
//   planckton::PhotometryInput input;   // measurements with their bands, values, units
//   planckton::MeasuredPhotometry data = planckton::prepare_photometry(input);
//   planckton::PhotometryFitResult fit = planckton::fit_planck_photometry(data, {});
//   std::printf("T = %.0f K\n", fit.fit.temperature_k);
#pragma once

#include <vector>

#include "science/photometry.h"
#include "science/planck_fit.h"

namespace planckton {

struct BandFit {
  double model = 0.0;     // in the measurement's space (SI flux density or magnitude)
  double residual = 0.0;  // (measured - model) / sigma; for limits sqrt(-2 ln Phi), signed + when below
  // The effective-wavelength shortcut's value, for comparison: the fitted curve at the band's quoted
  // wavelength (the pivot for band averages), in the measurement's space.
  double model_monochromatic = 0.0;
};

struct PhotometryFitResult {
  PlanckFitResult fit;       // the estimate, covariance, statistics and warnings, as for spectra
  std::vector<BandFit> bands;
};

// Throws InputError as fit_planck does (options), and field "photometry" when there are fewer bands
// than free parameters. options.loss must be kNone (field "options.loss": robust losses are for
// spectra with many points).
PhotometryFitResult fit_planck_photometry(const MeasuredPhotometry& photometry, const PlanckFitOptions& options);

}  // namespace planckton
