// The Ceres Solver settings that planckton's fits share, so that every fit stops by the same rules
// and reports its covariance the same way.
#pragma once

#include <ceres/ceres.h>

#include <memory>
#include <string>
#include <vector>

#include "science/planck_fit.h"

namespace planckton::ceres_settings {

// Relative step at which a local solve stops: a temperature is then known to ~1e-9 relative, far
// inside any interval it is quoted with.
inline constexpr double kParameterTolerance = 1e-10;

// Levenberg-Marquardt with dense QR, tight tolerances (the fits are compared with reference fits to
// 1e-6), silent, one thread (a service runs one fit per worker), within the request's budget.
ceres::Solver::Options solver_options(int max_iterations, double time_budget_seconds);

// Huber or Cauchy (ceres/loss_function.h) with the given scale; null for plain least squares.
std::unique_ptr<ceres::LossFunction> make_loss(RobustLoss loss, double scale);

// rho(s) of the loss for a squared residual s, as Ceres defines it (loss_function.h): the robust
// cost a fit reports.
double robust_rho(RobustLoss loss, double scale, double s);

// "converged", "time_limit", "iteration_limit" or "failed".
std::string termination_name(const ceres::Solver::Summary& summary);

// (J^T J)^-1 over the given parameter blocks at the current point (e.g. Press et al., Numerical
// Recipes, 3rd ed., 15.5), from the robustified Jacobian ceres::Problem::Evaluate gives (with a
// loss, its correction as in ceres::Covariance), row-major over the blocks' parameters in order.
// Singular, as ceres::Covariance's DENSE_SVD judges it, when the reciprocal condition number of
// J^T J is below 1e-14; computed here rather than by ceres::Covariance so that a singular matrix is
// an answer (false), not a line on the service's log.
bool covariance(ceres::Problem& problem, const std::vector<double*>& blocks, std::vector<double>& out);

}  // namespace planckton::ceres_settings
