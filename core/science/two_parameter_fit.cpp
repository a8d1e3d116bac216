#include "science/two_parameter_fit.h"

#include <boost/math/special_functions/gamma.hpp>
#include <cmath>
#include <vector>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"

namespace planckton::two_parameter_fit {

namespace {
constexpr double kStartGridRatio = 2.0;
constexpr int kGoldenSectionSteps = 16;
}  // namespace

std::array<double, 2> start_range(double min_frequency_hz, double max_frequency_hz, double log_t_min, double log_t_max) {
  const double h_over_k = constants::kPlanckOverBoltzmann;
  const double lo = std::max(log_t_min, std::log(h_over_k * min_frequency_hz / kStartMaxX));
  const double hi = std::min(log_t_max, std::log(h_over_k * max_frequency_hz / kStartMinX));
  if (!(lo < hi)) return {log_t_min, log_t_max};
  return {lo, hi};
}

GridNode search_log_temperature(double lo, double hi, const std::function<GridNode(double)>& profile) {
  const int nodes = std::clamp(static_cast<int>(std::ceil((hi - lo) / std::log(kStartGridRatio))) + 1, 3, 400);
  const double step = (hi - lo) / (nodes - 1);
  std::vector<GridNode> grid;
  grid.reserve(nodes);
  for (int j = 0; j < nodes; ++j) grid.push_back(profile(lo + j * step));
  const auto best = std::min_element(grid.begin(), grid.end(),
                                     [](const GridNode& a, const GridNode& b) { return a.cost < b.cost; });
  const std::size_t b = static_cast<std::size_t>(best - grid.begin());
  if (!std::isfinite(best->cost)) return *best;
  constexpr double kInverseGolden = 0.6180339887498949;
  double a = grid[b == 0 ? 0 : b - 1].log_temperature;
  double d = grid[std::min(b + 1, grid.size() - 1)].log_temperature;
  GridNode left = profile(d - kInverseGolden * (d - a));
  GridNode right = profile(a + kInverseGolden * (d - a));
  for (int iteration = 0; iteration < kGoldenSectionSteps; ++iteration) {
    if (left.cost <= right.cost) {
      d = right.log_temperature;
      right = left;
      left = profile(d - kInverseGolden * (d - a));
    } else {
      a = left.log_temperature;
      left = right;
      right = profile(a + kInverseGolden * (d - a));
    }
  }
  const GridNode& refined = left.cost <= right.cost ? left : right;
  return refined.cost < best->cost ? refined : *best;
}

SolveOutcome solve_problem(ceres::Problem& problem, double* parameters, const PlanckFitOptions& options) {
  const ceres::Solver::Options solver_options =
      ceres_settings::solver_options(options.max_iterations, options.time_budget_seconds);
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);

  SolveOutcome outcome;
  outcome.termination = ceres_settings::termination_name(summary);
  outcome.message = summary.message;
  outcome.iterations = static_cast<int>(summary.iterations.size()) - 1;

  std::vector<double> covariance;
  outcome.covariance_available = ceres_settings::covariance(problem, {parameters}, covariance);
  if (outcome.covariance_available) std::copy(covariance.begin(), covariance.end(), outcome.covariance.begin());
  return outcome;
}

bool covariance_from_columns(const Eigen::Ref<const Eigen::ArrayXd>& d_log_temperature,
                             const Eigen::Ref<const Eigen::ArrayXd>& d_log_scale, std::array<double, 4>& out) {
  Eigen::Matrix2d information;
  information(0, 0) = d_log_temperature.square().sum();
  information(0, 1) = information(1, 0) = (d_log_temperature * d_log_scale).sum();
  information(1, 1) = d_log_scale.square().sum();
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(information);
  const Eigen::Vector2d values = eigen.eigenvalues();
  if (!(values[0] > 1e-14 * values[1]) || !std::isfinite(values[1])) return false;
  const Eigen::Matrix2d covariance =
      eigen.eigenvectors() * values.cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose();
  out = {covariance(0, 0), covariance(0, 1), covariance(1, 0), covariance(1, 1)};
  return true;
}

double summarise(const SolveOutcome& outcome, const double* parameters, double log_t_min, double log_t_max,
                 double chi_square, std::size_t residual_count, bool errors_given, PlanckFitResult& result) {
  result.termination = outcome.termination;
  result.converged = outcome.termination == "converged";
  result.solver_message = outcome.message;
  result.iterations = outcome.iterations;
  result.temperature_k = std::exp(parameters[0]);
  result.scale = std::exp(parameters[1]);
  result.temperature_at_bound =
      std::abs(parameters[0] - log_t_min) < 1e-9 || std::abs(parameters[0] - log_t_max) < 1e-9;
  result.errors_estimated = !errors_given;
  result.degrees_of_freedom = static_cast<int>(residual_count) - kParameters;
  const double residual_variance = result.degrees_of_freedom > 0 ? chi_square / result.degrees_of_freedom : 0.0;
  if (errors_given) {
    result.chi_square = chi_square;
    if (result.degrees_of_freedom > 0) {
      result.p_value = boost::math::gamma_q(0.5 * result.degrees_of_freedom, 0.5 * chi_square);
    }
  }
  if (outcome.covariance_available && !result.temperature_at_bound) {
    result.log_covariance = outcome.covariance;
    const double factor = result.errors_estimated ? residual_variance : 1.0;
    for (double& c : result.log_covariance) c *= factor;
    result.covariance_available = std::isfinite(result.log_covariance[0]) && result.log_covariance[0] > 0.0 &&
                                  (!result.errors_estimated || result.degrees_of_freedom > 0);
  }
  return residual_variance;
}

void add_warnings(const Coverage& coverage, const PlanckFitOptions& options, PlanckFitResult& result) {
  const auto warn = [&](std::string code, std::string message) {
    result.warnings.push_back({std::move(code), std::move(message)});
  };
  const std::string items = coverage.items;
  if (result.errors_estimated) {
    warn("errors_estimated",
         std::string(items == "points" ? "no y_error was given" : "no errors were given") + ": all " + items + " have equal weight, the one-sigma scatter is estimated from "
         "the residuals and the intervals are scaled by it; chi-square and p-value are not reported");
  }
  if (!result.converged) {
    warn("not_converged", "the solver stopped before converging (" + result.termination + ": " +
                              result.solver_message + "); the values are its best estimate so far");
  }
  if (result.temperature_at_bound) {
    warn("temperature_at_bound", "the temperature sits at a bound of options.temperature_bounds [" +
                                     std::to_string(options.min_temperature_k) + ", " +
                                     std::to_string(options.max_temperature_k) + "] K; the interval is not reliable");
  }
  const double peak_nu = peak_frequency(peak_exponent(coverage.convention), result.temperature_k);
  if (peak_nu < coverage.min_frequency_hz) {
    warn("peak_outside_data",
         "the fitted curve peaks below the lowest frequency (longest wavelength) of the data: the data "
         "cover only the Wien side, so the temperature rests on the curve's exponential fall-off");
  } else if (peak_nu > coverage.max_frequency_hz) {
    warn("peak_outside_data",
         "the fitted curve peaks above the highest frequency (shortest wavelength) of the data: the data "
         "cover only the Rayleigh-Jeans side, where the shape hardly depends on temperature, so the "
         "temperature is weakly constrained (often only from below)");
  }
  if (result.p_value && *result.p_value < 1e-3) {
    warn("poor_fit", "p-value below 0.001: the model does not describe the data within their errors "
                     "(underestimated errors, lines or a source that is not a black body?)");
  }
  if (result.points_used < 3 * kParameters) {
    warn("few_points", "fewer " + items + " than three per free parameter: the intervals rest on few data");
  }
  if (!result.covariance_available) {
    warn("covariance_unavailable", "the covariance matrix is singular at the solution: the data do not "
                                   "constrain both temperature and scale; no errors are reported");
  }
}

void validate_options(const PlanckFitOptions& options) {
  if (!(options.min_temperature_k > 0.0) || !(options.max_temperature_k > options.min_temperature_k) ||
      !std::isfinite(options.max_temperature_k)) {
    throw InputError("options.temperature_bounds", "must be [lo, hi] with 0 < lo < hi, finite, in K");
  }
  if (options.loss != RobustLoss::kNone && (!(options.loss_scale > 0.0) || !std::isfinite(options.loss_scale))) {
    throw InputError("options.loss.scale", "must be a positive finite number");
  }
  if (options.max_iterations < 1) throw InputError("options.max_iterations", "must be at least 1");
  if (!(options.time_budget_seconds > 0.0)) {
    throw InputError("options.time_budget_seconds", "must be positive");
  }
  if (options.max_scale && (!(*options.max_scale > 0.0) || !std::isfinite(*options.max_scale))) {
    throw InputError("options.max_scale", "must be a positive finite number");
  }
}

}  // namespace planckton::two_parameter_fit
