// The machinery the Planck fits of spectra (planck_fit.cpp) and of band measurements
// (photometry_fit.cpp) share: the start search over ln T, the two solvers with their budgets, the
// covariance, the statistics and the warnings. Internal to core/science.
#pragma once

#include <ceres/ceres.h>
#include <ceres/tiny_solver.h>

#include <Eigen/Dense>

#include <algorithm>
#include <array>
#include <chrono>
#include <functional>
#include <string>

#include "science/ceres_settings.h"
#include "science/planck.h"
#include "science/planck_fit.h"

namespace planckton::two_parameter_fit {

inline constexpr int kParameters = 2;  // ln T, ln scale
// The reduced frequency range over which data constrain a temperature: the start search spans
// x = h nu / k T from kStartMinX at the highest frequency to kStartMaxX at the lowest.
inline constexpr double kStartMinX = 1e-3;
inline constexpr double kStartMaxX = 300.0;

// Throws InputError for inconsistent options (fields "options.temperature_bounds", "options.loss.scale",
// "options.max_iterations", "options.time_budget_seconds", "options.max_scale").
void validate_options(const PlanckFitOptions& options);

struct GridNode {
  double log_temperature;
  double log_scale;
  double cost;
};

// The start: a grid over ln T in [lo, hi] (ratio 2 between nodes) of the profiled cost (the best
// scale at each temperature, from `profile`), refined by a golden-section search (J. Kiefer 1953)
// between the best node's neighbours, where the cost is unimodal at the grid's resolution.
GridNode search_log_temperature(double lo, double hi, const std::function<GridNode(double)>& profile);

// The range [lo, hi] of ln T that data between the two frequencies constrain (kStartMinX,
// kStartMaxX), within the bounds.
std::array<double, 2> start_range(double min_frequency_hz, double max_frequency_hz, double log_t_min, double log_t_max);

struct SolveOutcome {
  std::string termination;
  std::string message;
  int iterations = 0;
  bool covariance_available = false;
  std::array<double, 4> covariance{};  // row-major, (ln T, ln scale)
};

// ceres::TinySolver (Ceres 2.1) reads its cost before checking that the first evaluation succeeded;
// the functors here always succeed (non-finite results are caught after the solve), so GCC's
// warning about that read does not apply.
#pragma GCC diagnostic push
#if !defined(__clang__)  // clang has no such warning, and warns about the unknown name
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
#endif
// Fast path for plain least squares: ceres::TinySolver, Ceres' Levenberg-Marquardt for small dense
// problems, without the set-up cost of a ceres::Problem. It has no clock of its own, so it runs in
// rounds of 20 iterations and the time budget is checked between rounds. `Problem` is a TinySolver
// functor with two parameters.
template <class Problem>
SolveOutcome solve_small_dense(const Problem& problem, double* parameters, const PlanckFitOptions& options) {
  using Solver = ceres::TinySolver<Problem>;
  constexpr int kIterationsPerRound = 20;
  const auto started = std::chrono::steady_clock::now();
  Solver solver;
  solver.options.parameter_tolerance = ceres_settings::kParameterTolerance;
  solver.options.function_tolerance = 0.0;
  solver.options.gradient_tolerance = 0.0;
  solver.options.cost_threshold = 0.0;
  typename Solver::Parameters x(parameters[0], parameters[1]);
  SolveOutcome outcome;
  while (true) {
    const int remaining = options.max_iterations - outcome.iterations;
    // TinySolver counts its first evaluation as iteration 0 and stops at max_num_iterations - 1.
    solver.options.max_num_iterations = std::min(remaining, kIterationsPerRound) + 1;
    const typename Solver::Summary& summary = solver.Solve(problem, &x);
    outcome.iterations += summary.iterations;
    if (summary.status != Solver::HIT_MAX_ITERATIONS) {
      outcome.termination = "converged";
      outcome.message = summary.status == Solver::RELATIVE_STEP_SIZE_TOO_SMALL
                            ? "relative step below the parameter tolerance"
                            : "cost change or gradient vanished";
      break;
    }
    if (outcome.iterations >= options.max_iterations) {
      outcome.termination = "iteration_limit";
      outcome.message = "maximum number of iterations reached";
      break;
    }
    const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    if (elapsed >= options.time_budget_seconds) {
      outcome.termination = "time_limit";
      outcome.message = "time budget of " + std::to_string(options.time_budget_seconds) + " s used up";
      break;
    }
  }
  parameters[0] = x[0];
  parameters[1] = x[1];
  return outcome;
}
#pragma GCC diagnostic pop

// General path: solves a ceres::Problem over the parameter block (bounds and losses already set)
// within the options' budgets, then the covariance (ceres_settings::covariance) at the solution.
SolveOutcome solve_problem(ceres::Problem& problem, double* parameters, const PlanckFitOptions& options);

// The Gauss-Newton covariance (J^T J)^-1 (e.g. W. H. Press et al., Numerical Recipes, 3rd ed.,
// section 15.5) from the two Jacobian columns, for the fast path. Eigen's self-adjoint eigensolver
// detects a singular matrix the way ceres::Covariance's DENSE_SVD does (reciprocal condition number
// below 1e-14). False when singular.
bool covariance_from_columns(const Eigen::Ref<const Eigen::ArrayXd>& d_log_temperature,
                             const Eigen::Ref<const Eigen::ArrayXd>& d_log_scale, std::array<double, 4>& out);

// Fills the result's solver fields, estimate, bounds flags, chi^2 (sum of squared residuals), degrees
// of freedom, p-value Q(dof/2, chi^2/2) (Boost.Math) and covariance (scaled by chi^2 / dof when the
// errors were estimated). Returns chi^2 / dof.
double summarise(const SolveOutcome& outcome, const double* parameters, double log_t_min, double log_t_max,
                 double chi_square, std::size_t residual_count, bool errors_given, PlanckFitResult& result);

// What the data cover, for the warnings.
struct Coverage {
  Convention convention;   // of the data (where their curve peaks)
  double min_frequency_hz;
  double max_frequency_hz;
  const char* items;       // "points" or "bands"
};
void add_warnings(const Coverage& coverage, const PlanckFitOptions& options, PlanckFitResult& result);

}  // namespace planckton::two_parameter_fit
