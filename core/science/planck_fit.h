// Fitting a Planck curve to a measured spectrum: temperature and scale, with covariance.
//
// Model. y(nu) = scale * B(nu; T), with B in the convention of the data (per unit frequency,
// wavelength, wavenumber or photon energy; energy or photons; see planck.h). For flux densities the
// scale is the solid angle Omega the source subtends (sr; Omega = pi theta^2 for a uniform disc of
// angular radius theta); for intensities it is the emissivity (a grey-body factor); for relative
// spectra it is arbitrary.
//
// Method.
//  1. Start: a coarse grid over ln T (ratio 2 between nodes) on an evenly spaced subsample of 48
//     points, with the best scale at each node in closed form (linear least squares), refined by a
//     golden-section search (J. Kiefer 1953) between the best node's neighbours. The grid spans the
//     whole range the data can constrain (x = h nu / k T from 1e-3 at the highest frequency to 300
//     at the lowest) within the temperature bounds, so the local solve cannot start in the wrong
//     basin.
//  2. Local solve: Levenberg-Marquardt (K. Levenberg 1944; D. W. Marquardt, SIAM J. Appl. Math. 11,
//     431 (1963)) in Ceres Solver over (ln T, ln scale), so both stay positive, with an analytic
//     Jacobian. Residuals are (y - model) / sigma. Plain least squares runs ceres::TinySolver (small
//     dense problems, no set-up cost), in rounds so that the time budget is checked; a robust loss
//     (Huber 1964, or Cauchy), or a solution outside the temperature bounds (or above
//     options.max_scale), runs a ceres::Problem with ln T bounded (and ln scale, when max_scale is
//     set) and each point its own residual block so that the loss acts per point.
//  3. Covariance: (J^T J)^-1 at the solution: the Gauss-Newton formula on the fast path, and
//     the robustified Jacobian's on the general one (ceres_settings::covariance; a test checks that they agree). Without y_error every
//     point has equal weight and the covariance is multiplied by chi^2 / dof, the residual variance
//     (as scipy.optimize.curve_fit does with absolute_sigma=False), and a warning says so.
//  4. Goodness of fit: chi^2, degrees of freedom n - 2, and the p-value Q(dof/2, chi^2/2) (the
//     upper regularised incomplete gamma function; Boost.Math).
//
// Example:
//   planckton::MeasuredSpectrum spectrum = planckton::prepare_spectrum(input);
//   planckton::PlanckFitOptions options;
//   options.loss = planckton::RobustLoss::kCauchy;
//   planckton::PlanckFitResult fit = planckton::fit_planck(spectrum, options);
//   if (fit.converged) std::printf("T = %.1f K\n", fit.temperature_k);
#pragma once

#include <array>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "science/spectrum.h"

namespace planckton {

enum class RobustLoss { kNone, kHuber, kCauchy };

struct PlanckFitOptions {
  // Temperature bounds, K. The defaults cover everything from cold dust to hot plasmas.
  double min_temperature_k = 0.1;
  double max_temperature_k = 1e9;
  // Robust loss for outliers and emission lines; scale in units of the point's sigma (or, without
  // y_error, of the scatter estimated robustly from the residuals at the start).
  RobustLoss loss = RobustLoss::kNone;
  double loss_scale = 1.0;
  // Solver budget. A fit that runs out of either still returns its best estimate, flagged
  // (termination "iteration_limit" or "time_limit").
  int max_iterations = 200;
  double time_budget_seconds = 10.0;
  // Optional upper bound on the scale (e.g. 1 for an emissivity; see radiometry.h). When the fast
  // path ends above it, the fit is solved again on the general path with ln scale bounded above,
  // started on the bound at the temperature that is best there (Gauss-Newton in ln T alone); a
  // result at the bound is flagged (scale_at_bound). Its covariance is then the curvature of the
  // unconstrained cost there, so the scale's interval is one-sided in truth.
  std::optional<double> max_scale;
};

struct FitWarning {
  std::string code;     // stable, machine-readable
  std::string message;  // for people
};

struct PlanckFitResult {
  // How the solve went.
  bool converged = false;
  std::string termination;     // "converged", "iteration_limit", "time_limit" or "failed"
  std::string solver_message;  // Ceres' own words
  int iterations = 0;
  double start_temperature_k = 0.0;

  // The estimate and its covariance in (ln T, ln scale), row-major 2x2. When the errors were
  // estimated from the scatter, the covariance already includes that factor.
  double temperature_k = 0.0;
  double scale = 0.0;
  std::array<double, 4> log_covariance{};
  bool covariance_available = false;
  bool temperature_at_bound = false;
  bool scale_at_bound = false;  // at options.max_scale

  // Goodness of fit. chi_square and p_value are absent when the errors were estimated.
  std::size_t points_used = 0;
  int degrees_of_freedom = 0;
  std::optional<double> chi_square;
  std::optional<double> p_value;
  bool errors_estimated = false;
  double residual_scatter_si = 0.0;  // estimated one-sigma scatter of y, when errors_estimated
  double robust_cost = 0.0;          // sum of the robust loss over the points, when a loss is used

  std::vector<FitWarning> warnings;

  double temperature_log_sigma() const;
  double scale_log_sigma() const;
  double log_correlation() const;
};

// The fitted curve scale * B(nu; T) in a convention (SI; per steradian for intensities), and the
// linearised one-sigma of its logarithm from the covariance: var ln m = s^2 C_TT + 2 s C_TS + C_SS
// with s = d ln B / d ln T (planck.h). For plots and tables of the model; 0 without a covariance.
struct ModelPoint {
  double value = 0.0;
  double log_sigma = 0.0;
};
ModelPoint fitted_curve(const PlanckFitResult& fit, Convention convention, double frequency_hz);

// Throws InputError when the spectrum has fewer points than free parameters or the options are
// inconsistent (field names: "options.temperature_bounds", "options.loss", "options.max_scale").
PlanckFitResult fit_planck(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options);

}  // namespace planckton
