#include "science/planck_fit.h"

#include <ceres/ceres.h>

#include <algorithm>
#include <boost/math/special_functions/gamma.hpp>
#include <cmath>
#include <memory>
#include <numeric>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"

namespace planckton {

namespace {

constexpr int kParameters = 2;  // ln T, ln scale
// Beyond this x the model is evaluated in log space so that tiny values neither underflow through
// the product prefactor * scale * exp(-x) nor lose precision (see planck.h).
constexpr double kLogSpaceThreshold = 600.0;
constexpr std::size_t kStartSubsample = 48;
constexpr double kStartGridRatio = 1.5;
// The reduced frequency range over which data constrain a temperature (see the header).
constexpr double kStartMinX = 1e-3;
constexpr double kStartMaxX = 300.0;

// Per-point constants, computed once per request (never per iteration).
struct PointTerms {
  std::vector<double> prefactor;      // p(nu) of planck.h
  std::vector<double> log_prefactor;  // ln p(nu)
  std::vector<double> h_nu_over_k;    // x * T
  std::vector<double> observed;       // y, SI
  std::vector<double> weight;         // 1 / sigma
};

PointTerms make_point_terms(const MeasuredSpectrum& spectrum, double uniform_weight) {
  const std::size_t n = spectrum.size();
  PointTerms terms;
  terms.prefactor.resize(n);
  terms.log_prefactor.resize(n);
  terms.h_nu_over_k.resize(n);
  terms.observed = spectrum.value_si;
  terms.weight.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double nu = spectrum.frequency_hz[i];
    terms.prefactor[i] = planck_prefactor(spectrum.y_unit.convention, nu);
    terms.log_prefactor[i] = std::log(terms.prefactor[i]);
    terms.h_nu_over_k[i] = constants::kPlanckOverBoltzmann * nu;
    terms.weight[i] = spectrum.has_errors() ? 1.0 / spectrum.error_si[i] : uniform_weight;
  }
  return terms;
}

// The model at one point and d ln(model) / d ln T = x / (1 - e^-x).
struct PointModel {
  double value;
  double log_temperature_slope;
};

inline PointModel evaluate_point(const PointTerms& t, std::size_t i, double inverse_temperature,
                                 double scale, double log_scale) {
  const double x = t.h_nu_over_k[i] * inverse_temperature;
  if (x > kLogSpaceThreshold) return {std::exp(log_scale + t.log_prefactor[i] - x), x};
  const double e = std::exp(-x);
  // 1 - e^-x loses precision for small x; expm1 keeps it (the Rayleigh-Jeans side).
  const double one_minus_e = x < 0.5 ? -std::expm1(-x) : 1.0 - e;
  return {scale * t.prefactor[i] * e / one_minus_e, x / one_minus_e};
}

// Residuals (y_i - model_i) * w_i for the points [begin, end), parameters {ln T, ln scale}.
class PlanckResiduals final : public ceres::CostFunction {
 public:
  PlanckResiduals(const PointTerms* terms, std::size_t begin, std::size_t end)
      : terms_(terms), begin_(begin), end_(end) {
    set_num_residuals(static_cast<int>(end - begin));
    mutable_parameter_block_sizes()->push_back(kParameters);
  }

  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    const double log_temperature = parameters[0][0];
    const double log_scale = parameters[0][1];
    const double inverse_temperature = std::exp(-log_temperature);
    const double scale = std::exp(log_scale);
    double* jacobian = jacobians != nullptr ? jacobians[0] : nullptr;
    const PointTerms& t = *terms_;
    for (std::size_t i = begin_, k = 0; i < end_; ++i, ++k) {
      const PointModel m = evaluate_point(t, i, inverse_temperature, scale, log_scale);
      const double w = t.weight[i];
      residuals[k] = w * (t.observed[i] - m.value);
      if (jacobian != nullptr) {
        jacobian[2 * k] = -w * m.value * m.log_temperature_slope;
        jacobian[2 * k + 1] = -w * m.value;
      }
    }
    return true;
  }

 private:
  const PointTerms* terms_;
  std::size_t begin_, end_;
};

std::unique_ptr<ceres::LossFunction> make_loss(RobustLoss loss, double scale) {
  switch (loss) {
    case RobustLoss::kNone: return nullptr;
    case RobustLoss::kHuber: return std::make_unique<ceres::HuberLoss>(scale);
    case RobustLoss::kCauchy: return std::make_unique<ceres::CauchyLoss>(scale);
  }
  return nullptr;
}

// rho(s) of the loss for a squared residual s, as Ceres defines it (loss_function.h).
double robust_rho(RobustLoss loss, double scale, double s) {
  const double b = scale * scale;
  switch (loss) {
    case RobustLoss::kNone: return s;
    case RobustLoss::kHuber: return s > b ? 2.0 * std::sqrt(b * s) - b : s;
    case RobustLoss::kCauchy: return b * std::log1p(s / b);
  }
  return s;
}

std::vector<std::size_t> evenly_spaced_subsample(const MeasuredSpectrum& spectrum, std::size_t count) {
  std::vector<std::size_t> order(spectrum.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return spectrum.frequency_hz[a] < spectrum.frequency_hz[b];
  });
  if (order.size() <= count) return order;
  std::vector<std::size_t> picked(count);
  for (std::size_t j = 0; j < count; ++j) picked[j] = order[(j * (order.size() - 1)) / (count - 1)];
  return picked;
}

struct GridNode {
  double log_temperature;
  double log_scale;
  double cost;
};

// Best scale in closed form for a fixed temperature, and the (robust) cost there.
GridNode profile_scale(const PointTerms& t, const std::vector<std::size_t>& points, double log_temperature,
                       RobustLoss loss, double loss_scale) {
  const double inverse_temperature = std::exp(-log_temperature);
  double yf = 0.0, ff = 0.0;
  for (std::size_t i : points) {
    const double f = evaluate_point(t, i, inverse_temperature, 1.0, 0.0).value;
    const double w2 = t.weight[i] * t.weight[i];
    yf += w2 * t.observed[i] * f;
    ff += w2 * f * f;
  }
  const bool usable = ff > 0.0 && std::isfinite(ff) && yf > 0.0;
  const double scale = usable ? yf / ff : 0.0;
  double cost = 0.0;
  for (std::size_t i : points) {
    const double f = evaluate_point(t, i, inverse_temperature, 1.0, 0.0).value;
    const double r = t.weight[i] * (t.observed[i] - scale * f);
    cost += robust_rho(loss, loss_scale, r * r);
  }
  return {log_temperature, usable ? std::log(scale) : -HUGE_VAL, usable ? cost : HUGE_VAL};
}

// Stage 1 of the method in the header.
GridNode grid_start(const MeasuredSpectrum& spectrum, const PointTerms& t, double log_t_min,
                    double log_t_max, RobustLoss loss, double loss_scale) {
  const double h_over_k = constants::kPlanckOverBoltzmann;
  double lo = std::max(log_t_min, std::log(h_over_k * spectrum.min_frequency_hz / kStartMaxX));
  double hi = std::min(log_t_max, std::log(h_over_k * spectrum.max_frequency_hz / kStartMinX));
  if (!(lo < hi)) {
    lo = log_t_min;
    hi = log_t_max;
  }
  const std::vector<std::size_t> points = evenly_spaced_subsample(spectrum, kStartSubsample);
  const int nodes = std::clamp(static_cast<int>(std::ceil((hi - lo) / std::log(kStartGridRatio))) + 1, 3, 400);
  const double step = (hi - lo) / (nodes - 1);
  std::vector<GridNode> grid;
  grid.reserve(nodes);
  for (int j = 0; j < nodes; ++j) grid.push_back(profile_scale(t, points, lo + j * step, loss, loss_scale));
  const auto best = std::min_element(grid.begin(), grid.end(),
                                     [](const GridNode& a, const GridNode& b) { return a.cost < b.cost; });
  const std::size_t b = static_cast<std::size_t>(best - grid.begin());
  if (b == 0 || b + 1 == grid.size() || !std::isfinite(best->cost)) return *best;
  // Vertex of the parabola through the best node and its neighbours (equal spacing).
  const double c0 = grid[b - 1].cost, c1 = grid[b].cost, c2 = grid[b + 1].cost;
  const double curvature = c0 - 2.0 * c1 + c2;
  if (!(curvature > 0.0)) return *best;
  const double offset = std::clamp(0.5 * (c0 - c2) / curvature, -1.0, 1.0);
  const GridNode refined = profile_scale(t, points, best->log_temperature + offset * step, loss, loss_scale);
  return refined.cost < best->cost ? refined : *best;
}

double median_absolute_residual(const PointTerms& t, double log_temperature, double log_scale) {
  const double inverse_temperature = std::exp(-log_temperature);
  const double scale = std::exp(log_scale);
  std::vector<double> absolute(t.observed.size());
  for (std::size_t i = 0; i < absolute.size(); ++i) {
    const double model = evaluate_point(t, i, inverse_temperature, scale, log_scale).value;
    absolute[i] = std::abs(t.observed[i] - model) * t.weight[i];
  }
  const auto middle = absolute.begin() + static_cast<std::ptrdiff_t>(absolute.size() / 2);
  std::nth_element(absolute.begin(), middle, absolute.end());
  return *middle;
}

std::string termination_name(const ceres::Solver::Summary& summary) {
  switch (summary.termination_type) {
    case ceres::CONVERGENCE:
    case ceres::USER_SUCCESS: return "converged";
    case ceres::NO_CONVERGENCE:
      return summary.message.find("time") != std::string::npos ? "time_limit" : "iteration_limit";
    default: return "failed";
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
}

void add_diagnostic_warnings(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options,
                             PlanckFitResult& result) {
  const auto warn = [&](std::string code, std::string message) {
    result.warnings.push_back({std::move(code), std::move(message)});
  };
  if (result.errors_estimated) {
    warn("errors_estimated",
         "no y_error was given: all points have equal weight, the one-sigma scatter is estimated from "
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
  const double peak_nu = peak_frequency(peak_exponent(spectrum.y_unit.convention), result.temperature_k);
  if (peak_nu < spectrum.min_frequency_hz) {
    warn("peak_outside_data",
         "the fitted curve peaks below the lowest frequency (longest wavelength) of the data: the data "
         "cover only the Wien side, so the temperature rests on the curve's exponential fall-off");
  } else if (peak_nu > spectrum.max_frequency_hz) {
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
    warn("few_points", "fewer points than three per free parameter: the intervals rest on few data");
  }
  if (!result.covariance_available) {
    warn("covariance_unavailable", "the covariance matrix is singular at the solution: the data do not "
                                   "constrain both temperature and scale; no errors are reported");
  }
}

}  // namespace

double PlanckFitResult::temperature_log_sigma() const { return std::sqrt(log_covariance[0]); }
double PlanckFitResult::scale_log_sigma() const { return std::sqrt(log_covariance[3]); }
double PlanckFitResult::log_correlation() const {
  return log_covariance[1] / std::sqrt(log_covariance[0] * log_covariance[3]);
}

PlanckFitResult fit_planck(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options) {
  validate_options(options);
  const std::size_t n = spectrum.size();
  if (n == 0) throw InputError("x", "no points are left to fit (all excluded?)");
  if (n < static_cast<std::size_t>(kParameters)) {
    throw InputError("x", "has " + std::to_string(n) + " point(s) to fit, fewer than the " +
                              std::to_string(kParameters) + " free parameters (temperature, scale)");
  }

  // Without errors, a uniform weight makes the residuals of order one, which keeps the solver's
  // tolerances meaningful whatever the unit of y; the covariance is rescaled afterwards.
  double mean_square = 0.0;
  for (double v : spectrum.value_si) mean_square += v * v;
  const double uniform_weight = 1.0 / std::sqrt(mean_square / static_cast<double>(n));
  PointTerms terms = make_point_terms(spectrum, uniform_weight);

  const double log_t_min = std::log(options.min_temperature_k);
  const double log_t_max = std::log(options.max_temperature_k);
  const bool robust = options.loss != RobustLoss::kNone;

  PlanckFitResult result;
  result.points_used = n;
  result.errors_estimated = !spectrum.has_errors();

  GridNode start = grid_start(spectrum, terms, log_t_min, log_t_max,
                              spectrum.has_errors() ? options.loss : RobustLoss::kNone, options.loss_scale);
  if (robust && !spectrum.has_errors()) {
    // The loss scale is in units of the scatter: estimate it robustly (1.4826 MAD, the normal
    // consistency factor) from the residuals at the start.
    const double mad = median_absolute_residual(terms, start.log_temperature, start.log_scale);
    if (mad > 0.0) {
      for (double& w : terms.weight) w /= 1.4826 * mad;
    }
  }
  if (!std::isfinite(start.log_scale)) start.log_scale = 0.0;
  result.start_temperature_k = std::exp(start.log_temperature);

  double parameters[kParameters] = {start.log_temperature, start.log_scale};
  ceres::Problem::Options problem_options;
  problem_options.loss_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  problem_options.enable_fast_removal = false;
  ceres::Problem problem(problem_options);
  std::unique_ptr<ceres::LossFunction> loss = make_loss(options.loss, options.loss_scale);
  if (robust) {
    for (std::size_t i = 0; i < n; ++i) problem.AddResidualBlock(new PlanckResiduals(&terms, i, i + 1), loss.get(), parameters);
  } else {
    problem.AddResidualBlock(new PlanckResiduals(&terms, 0, n), nullptr, parameters);
  }
  problem.SetParameterLowerBound(parameters, 0, log_t_min);
  problem.SetParameterUpperBound(parameters, 0, log_t_max);

  ceres::Solver::Options solver_options;
  solver_options.linear_solver_type = ceres::DENSE_QR;
  solver_options.max_num_iterations = options.max_iterations;
  solver_options.max_solver_time_in_seconds = options.time_budget_seconds;
  solver_options.function_tolerance = 1e-15;
  solver_options.parameter_tolerance = 1e-13;
  solver_options.gradient_tolerance = 1e-20;
  solver_options.logging_type = ceres::SILENT;
  solver_options.minimizer_progress_to_stdout = false;
  solver_options.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);

  result.termination = termination_name(summary);
  result.converged = result.termination == "converged";
  result.solver_message = summary.message;
  result.iterations = static_cast<int>(summary.iterations.size()) - 1;
  result.temperature_k = std::exp(parameters[0]);
  result.scale = std::exp(parameters[1]);
  result.temperature_at_bound = std::abs(parameters[0] - log_t_min) < 1e-9 || std::abs(parameters[0] - log_t_max) < 1e-9;

  // Plain chi-square of the final residuals (not the robust cost).
  double chi_square = 0.0;
  const double inverse_temperature = 1.0 / result.temperature_k;
  for (std::size_t i = 0; i < n; ++i) {
    const double model = evaluate_point(terms, i, inverse_temperature, result.scale, parameters[1]).value;
    const double r = terms.weight[i] * (terms.observed[i] - model);
    chi_square += r * r;
    if (robust) result.robust_cost += robust_rho(options.loss, options.loss_scale, r * r);
  }
  result.degrees_of_freedom = static_cast<int>(n) - kParameters;
  const double residual_variance =
      result.degrees_of_freedom > 0 ? chi_square / result.degrees_of_freedom : 0.0;
  if (spectrum.has_errors()) {
    result.chi_square = chi_square;
    if (result.degrees_of_freedom > 0) {
      result.p_value = boost::math::gamma_q(0.5 * result.degrees_of_freedom, 0.5 * chi_square);
    }
  } else {
    result.residual_scatter_si = std::sqrt(residual_variance) / terms.weight[0];
  }

  ceres::Covariance::Options covariance_options;
  covariance_options.algorithm_type = ceres::DENSE_SVD;
  covariance_options.num_threads = 1;
  ceres::Covariance covariance(covariance_options);
  const std::vector<std::pair<const double*, const double*>> blocks = {{parameters, parameters}};
  if (!result.temperature_at_bound && covariance.Compute(blocks, &problem) &&
      covariance.GetCovarianceBlock(parameters, parameters, result.log_covariance.data())) {
    const double factor = result.errors_estimated ? residual_variance : 1.0;
    for (double& c : result.log_covariance) c *= factor;
    result.covariance_available = std::isfinite(result.log_covariance[0]) && result.log_covariance[0] > 0.0 &&
                                  (!result.errors_estimated || result.degrees_of_freedom > 0);
  }
  add_diagnostic_warnings(spectrum, options, result);
  return result;
}

}  // namespace planckton
