// The Ceres Solver settings that planckton's fits share, so that every fit stops by the same rules.
#pragma once

#include <ceres/ceres.h>

#include <memory>
#include <string>

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

// "converged", "time_limit", "iteration_limit" or "failed".
std::string termination_name(const ceres::Solver::Summary& summary);

}  // namespace planckton::ceres_settings
